package predict_test

import (
	"bytes"
	"math"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/report"
)

// exportCSV is what `settle export` writes for three readings (report.WriteCSV, the
// writer behind it): 150.5 °C, an open-circuit fault, 148.25 °C, every 10 s, with a
// raw cell holding a comma.
func exportCSV(t *testing.T) string {
	t.Helper()
	t0 := time.Date(2026, 3, 14, 9, 0, 0, 0, time.UTC)
	rs := []daq.Reading{
		{Logger: "bench", Channel: "rack-1", Time: t0, Celsius: 150.5, Status: daq.StatusOK, Raw: "150.5"},
		{Logger: "bench", Channel: "rack-1", Time: t0.Add(10 * time.Second), Celsius: math.NaN(), Status: daq.StatusOpen, Raw: "OPEN,TC"},
		{Logger: "bench", Channel: "rack-1", Time: t0.Add(20 * time.Second), Celsius: 148.25, Status: daq.StatusOK, Raw: "148.25"},
	}
	var b bytes.Buffer
	seq := func(yield func(daq.Reading, error) bool) {
		for _, r := range rs {
			if !yield(r, nil) {
				return
			}
		}
	}
	if _, err := report.WriteCSV(&b, seq, time.Time{}); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// TestCurveDialect reads each member of the CSV family and each kind of malformed
// row. The expected values are the cells as written (no outside source needed).
func TestCurveDialect(t *testing.T) {
	nan := math.NaN()
	for _, tc := range []struct {
		name, in  string
		times     []float64
		celsius   []float64
		ambient   []float64
		malformed string // MalformedNote, "" for none
		err       string // error text, "" for none
	}{
		{name: "comma", in: "t_s,temp_c,ambient_c\n0,200.5,21\n5,190.25,21.5\n",
			times: []float64{0, 5}, celsius: []float64{200.5, 190.25}, ambient: []float64{21, 21.5}},
		{name: "semicolon and decimal comma", in: "\ufefft_s;temp_c;ambient_c\r\n0;200,5;21\r\n5,5;190,25;21,5\r\n",
			times: []float64{0, 5.5}, celsius: []float64{200.5, 190.25}, ambient: []float64{21, 21.5}},
		{name: "export output", in: exportCSV(t),
			times: []float64{0, 10, 20}, celsius: []float64{150.5, nan, 148.25}},
		{name: "missing cell", in: "t_s,temp_c\n0,200\n5\n10,180\n",
			times: []float64{0, 10}, celsius: []float64{200, 180},
			malformed: "1 malformed rows left out (line 3: 1 cells, the header has 2)."},
		{name: "extra column", in: "t_s,temp_c\n0,200\n5,190,5\n10,180\n",
			times: []float64{0, 10}, celsius: []float64{200, 180},
			malformed: "1 malformed rows left out (line 3: 3 cells, the header has 2 (a decimal comma in a comma-separated file? use ';' between fields))."},
		{name: "foo as time", in: "t_s,temp_c\n0,200\nfoo,190\n10,180\n",
			times: []float64{0, 10}, celsius: []float64{200, 180},
			malformed: `1 malformed rows left out (line 3: t_s "foo" is not a number of seconds).`},
		{name: "many malformed", in: "t_s,temp_c\n0,200\na,1\nb,1\nc,1\nd,1\ne,1\nf,1\ng,1\n10,180\n",
			times: []float64{0, 10}, celsius: []float64{200, 180},
			malformed: `7 malformed rows left out (line 3: t_s "a" is not a number of seconds; line 4: t_s "b" is not a number of seconds; line 5: t_s "c" is not a number of seconds; line 6: t_s "d" is not a number of seconds; line 7: t_s "e" is not a number of seconds; and 2 more).`},
		{name: "empty file", in: "", err: "x.csv: empty file: want a header row naming the columns, then one row per reading"},
		{name: "only blank and comment lines", in: "\n# a note\n\n", err: "x.csv: empty file"},
		{name: "no time column", in: "time;temp\n1;2\n",
			err: `x.csv line 1: header "time;temp" must name a time column in seconds (t_s, or elapsed_s as settle export writes) and a temperature column (temp_c or celsius)`},
		{name: "a quote never closed", in: "t_s,temp_c\n0,200\n5,\"190\n10,180\n",
			err: `x.csv line 3: extraneous or missing " in quoted-field`},
		{name: "time going back", in: "t_s,temp_c\n2,1\n1,1\n", err: "x.csv line 3: t_s 1 is before the previous row's 2"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c, err := predict.ReadCurveCSV(strings.NewReader(tc.in), "x.csv")
			if tc.err != "" {
				if err == nil || !strings.HasPrefix(err.Error(), tc.err) {
					t.Fatalf("err %v, want %q", err, tc.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			same := func(a, b []float64) bool {
				return slices.EqualFunc(a, b, func(x, y float64) bool { return x == y || math.IsNaN(x) && math.IsNaN(y) })
			}
			if !same(c.Times, tc.times) || !same(c.Celsius, tc.celsius) || !same(c.Ambient, tc.ambient) {
				t.Errorf("read t %v °C %v ambient %v; want %v %v %v", c.Times, c.Celsius, c.Ambient, tc.times, tc.celsius, tc.ambient)
			}
			if got := c.MalformedNote(); got != tc.malformed {
				t.Errorf("note %q\nwant %q", got, tc.malformed)
			}
		})
	}
}

// TestUntilKeepsMalformedRows: cutting the readings at --until keeps the file's note of
// the rows left out, so `settle fit --until` still says which lines were not read.
func TestUntilKeepsMalformedRows(t *testing.T) {
	c, err := predict.ReadCurveCSV(strings.NewReader("t_s,temp_c\n0,300\n60,280\nfoo,270\n120,262\n"), "cut.csv")
	if err != nil {
		t.Fatal(err)
	}
	cut := c.Until(60)
	if len(cut.Times) != 2 || cut.MalformedNote() != c.MalformedNote() || !strings.Contains(cut.MalformedNote(), "line 4") {
		t.Errorf("until 60: %d rows, note %q; the whole file's note %q", len(cut.Times), cut.MalformedNote(), c.MalformedNote())
	}
}
