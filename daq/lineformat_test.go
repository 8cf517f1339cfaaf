package daq

import (
	"errors"
	"math"
	"testing"
	"time"
)

func fptr(v float64) *float64 { return &v }

func mustParserFor(t testing.TB, cfg Logger) *LineParser {
	t.Helper()
	p, err := NewLineParserFor(cfg)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// TestLineRegexpNamedGroups reads a "key=value" line whose order is not fixed by a
// separator: named groups give the clock and the channels.
func TestLineRegexpNamedGroups(t *testing.T) {
	p := mustParserFor(t, Logger{Name: "box", Line: LineFormat{
		Regexp:  `^t=(?P<clock>\S+) T1=(?P<core>\S+) T2=(\S+)`,
		Columns: []Column{{Index: 3, Channel: "skin"}},
	}})
	got, err := p.Parse([]byte("t=5 T1=301.5 T2=88.25 extra"), t0)
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]float64{"skin": 88.25, "core": 301.5}
	if len(got) != 2 {
		t.Fatalf("got %d readings, want 2: %+v", len(got), got)
	}
	for _, r := range got {
		if r.Celsius != want[r.Channel] || !r.OK() || !r.Time.Equal(t0) {
			t.Errorf("%+v, want %s = %g at %v", r, r.Channel, want[r.Channel], t0)
		}
	}
	got, err = p.Parse([]byte("t=10 T1=301.0 T2=88.0"), t0.Add(5*time.Second))
	if err != nil || !got[0].Time.Equal(t0.Add(5*time.Second)) {
		t.Errorf("second line: %+v, %v; want time t0+5s from the clock group", got, err)
	}
	if _, err := p.Parse([]byte("garbage"), t0); !errors.Is(err, ErrNoMatch) {
		t.Errorf("non-matching line: err = %v, want ErrNoMatch", err)
	}
}

func TestLineDecimalComma(t *testing.T) {
	p := mustParserFor(t, Logger{Name: "eu", Line: LineFormat{
		Separator: ";", DecimalComma: true,
		Columns: []Column{{Index: 1, Channel: "a"}, {Index: 2, Channel: "b"}, {Index: 3, Channel: "c"}},
	}})
	got, err := p.Parse([]byte("21,5;-3,25;1e3"), t0)
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range []float64{21.5, -3.25, 1000} {
		if got[i].Celsius != want || !got[i].OK() {
			t.Errorf("field %d = %+v, want %g", i+1, got[i], want)
		}
	}
	if _, err := NewLineParserFor(Logger{Name: "eu", Line: LineFormat{
		DecimalComma: true, Columns: []Column{{Index: 1, Channel: "a"}}}}); err == nil {
		t.Error("decimal_comma with separator \",\": want an error")
	}
}

func TestLineClockFormats(t *testing.T) {
	berlin := time.FixedZone("CET", 3600)
	tests := []struct {
		format, field string
		want          time.Time
	}{
		{"unix", "1741964400.5", time.Unix(1741964400, 5e8)},
		{"rfc3339", "2025-03-14T16:00:00+01:00", time.Date(2025, 3, 14, 16, 0, 0, 0, berlin)},
		{"2006-01-02T15:04:05.000Z07:00", "2025-03-14T15:00:00.250Z", t0.Add(250 * time.Millisecond)},
		// strftime-style formats, as in the README's worked examples; the expected
		// times agree with Python's datetime.strptime (testdata/config/clock).
		{"%Y-%m-%dT%H:%M:%S%z", "2025-03-14T16:00:00+0100", time.Date(2025, 3, 14, 16, 0, 0, 0, berlin)},
		{"%d/%m/%Y %H:%M:%S", "14/03/2025 16:00:09", time.Date(2025, 3, 14, 16, 0, 9, 0, time.Local)},
		{"%m/%d/%Y %I:%M:%S %p", "03/14/2025 04:00:09 PM", time.Date(2025, 3, 14, 16, 0, 9, 0, time.Local)},
		// Lower-case am/pm and month names, as Python's strptime also reads them.
		{"%d %b %Y %I:%M:%S %p", "14 mar 2025 04:00:09 pm", time.Date(2025, 3, 14, 16, 0, 9, 0, time.Local)},
		// A clock marked UTC by a literal Z or UTC is UTC, whatever the host's zone.
		{"%Y-%m-%dT%H:%M:%SZ", "2025-03-14T15:00:00Z", t0},
		{"%Y-%m-%d %H:%M:%S UTC", "2025-03-14 15:00:00 UTC", t0},
		{"%Y-%m-%d %H:%M:%S.%f", "2025-03-14 16:00:09.25", time.Date(2025, 3, 14, 16, 0, 9, 25e7, time.Local)},
	}
	for _, tt := range tests {
		p := mustParserFor(t, Logger{Name: "clk", Line: LineFormat{
			Separator: ";", ClockColumn: 1, ClockFormat: tt.format,
			Columns: []Column{{Index: 2, Channel: "a"}},
		}})
		got, err := p.Parse([]byte(tt.field+";20"), t0.Add(time.Hour))
		if err != nil || !got[0].Time.Equal(tt.want) {
			t.Errorf("%s %q: %+v, %v; want time %v", tt.format, tt.field, got, err, tt.want)
		}
		if _, err := p.Parse([]byte("yesterday;20"), t0); !errors.Is(err, ErrBadClock) {
			t.Errorf("%s: bad clock err = %v, want ErrBadClock", tt.format, err)
		}
	}
}

// unitLogger reads °C, °F, K and two type K EMFs (one against the "cj" channel, one
// against a fixed 25 °C) and marks OPEN, ---- and 9999 or more as open circuit.
var unitLogger = Logger{
	Name: "units",
	Line: LineFormat{Separator: ",", Columns: []Column{
		{Index: 1, Channel: "cj"}, {Index: 2, Channel: "f"}, {Index: 3, Channel: "k"},
		{Index: 4, Channel: "tc1"}, {Index: 5, Channel: "tc2"},
	}},
	Inputs: []Input{
		{Channel: "f", Unit: "F"},
		{Channel: "k", Unit: "K"},
		{Channel: "tc1", Unit: "mV", Thermocouple: "K", ColdJunction: "cj"},
		{Channel: "tc2", Unit: "mV", Thermocouple: "K", ColdJunctionCelsius: fptr(25)},
	},
	Open: OpenCircuit{Markers: []string{"OPEN", "----"}, AtOrAbove: fptr(9999)},
}

func TestLineUnitsAndThermocouples(t *testing.T) {
	p := mustParserFor(t, unitLogger)
	// Type K: E(100 °C) = 4.096230 mV and E(25 °C) = 1.000242 mV (NIST ITS-90 reference
	// function, via shared/reference/reference-values.md section "check values", K rows),
	// so 4.096230 − 1.000242 = 3.095988 mV against a 25 °C cold junction is 100 °C.
	// Tolerance 0.06 °C: NIST's stated error band of the type K inverse.
	got, err := p.Parse([]byte("25,212,373.15,3.095988,3.095988"), t0)
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{25, 100, 100, 100, 100} // 212 °F and 373.15 K are 100 °C by definition
	for i, r := range got {
		if !r.OK() || math.Abs(r.Celsius-want[i]) > 0.06 {
			t.Errorf("%s = %+v, want %g °C", r.Channel, r, want[i])
		}
	}
}

func TestLineOpenCircuit(t *testing.T) {
	p := mustParserFor(t, unitLogger)
	got, err := p.Parse([]byte("open,----,9999,3.1,x"), t0)
	if err != nil {
		t.Fatal(err)
	}
	want := []struct {
		st  Status
		raw string
	}{
		{StatusOpen, "open"}, {StatusOpen, "----"}, {StatusOpen, "9999"},
		{StatusRange, "3.1 mV (cold junction cj: open)"}, {StatusUnparsable, "x"},
	}
	for i, w := range want {
		if got[i].Status != w.st || got[i].Raw != w.raw {
			t.Errorf("%s: status %s raw %q, want %s %q", got[i].Channel, got[i].Status, got[i].Raw, w.st, w.raw)
		}
	}
	// An EMF beyond type K's range is out of range, not a temperature.
	got, _ = p.Parse([]byte("25,70,300,80,-9"), t0)
	if got[3].Status != StatusRange || got[4].Status != StatusRange {
		t.Errorf("EMF 80 mV and -9 mV: statuses %s, %s; want range", got[3].Status, got[4].Status)
	}
}

// FuzzLineParseGeneral fuzzes the regexp, decimal-comma and unit paths.
func FuzzLineParseGeneral(f *testing.F) {
	for _, s := range seedLines(f) {
		f.Add([]byte(s))
	}
	f.Add([]byte("t=2025-03-14T15:00:00Z a=1,5 b=OPEN c=3,1"))
	re := mustParserFor(f, Logger{Name: "re", Line: LineFormat{
		Regexp: `t=(?P<clock>\S+) a=(?P<a>\S*) b=(\S*) c=(\S*)`, ClockFormat: "rfc3339", DecimalComma: true,
		Columns: []Column{{Index: 3, Channel: "b"}, {Index: 4, Channel: "c"}},
	}, Inputs: []Input{{Channel: "c", Unit: "mV", Thermocouple: "T", ColdJunction: "a"}},
		Open: OpenCircuit{Markers: []string{"OPEN"}, AtOrBelow: fptr(-300)}})
	units := mustParserFor(f, unitLogger)
	f.Fuzz(func(t *testing.T, line []byte) {
		for _, p := range []*LineParser{re, units} {
			got, err := p.Parse(line, t0)
			if err != nil && len(got) != 0 {
				t.Fatalf("line %q: readings with error %v", line, err)
			}
			for _, r := range got {
				if r.OK() && (math.IsNaN(r.Celsius) || math.IsInf(r.Celsius, 0)) {
					t.Fatalf("line %q: OK reading %+v is not finite", line, r)
				}
			}
		}
	})
}

// BenchmarkLineParseGeneral parses a line with a °F column, a type K EMF compensated
// by another channel and the open-circuit checks.
func BenchmarkLineParseGeneral(b *testing.B) {
	p := mustParserFor(b, unitLogger)
	line := []byte("24.8,150.5,350.2,3.0960,2.5")
	var buf []Reading
	b.ReportAllocs()
	for b.Loop() {
		var err error
		buf, err = p.AppendParse(buf[:0], line, t0)
		if err != nil || len(buf) != 5 {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "lines/s")
}
