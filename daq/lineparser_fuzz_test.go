package daq

import (
	"bufio"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"
)

// seedLines reads the fuzz seed corpus testdata/daq/line-seeds.txt (one line per seed;
// Go-quoted escapes such as \x00 are expanded).
func seedLines(t testing.TB) []string {
	t.Helper()
	path := filepath.Join("..", "testdata", "daq", "line-seeds.txt")
	f, err := os.Open(path)
	if err != nil {
		t.Fatalf("seed corpus: %v", err)
	}
	defer f.Close()
	var lines []string
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		s, err := strconv.Unquote(`"` + sc.Text() + `"`)
		if err != nil {
			s = sc.Text()
		}
		lines = append(lines, s)
	}
	if err := sc.Err(); err != nil {
		t.Fatalf("seed corpus %s: %v", path, err)
	}
	return lines
}

var fuzzFormat = LineFormat{
	ClockColumn: 1,
	Columns: []Column{
		{Index: 2, Channel: "s1"}, {Index: 3, Channel: "s2"}, {Index: 4, Channel: "s3"},
		{Index: 5, Channel: "s4"}, {Index: 6, Channel: "amb"},
	},
}

// FuzzLineParse checks that Parse never panics and that every configured column yields
// a Reading unless the line errors or is a blank/comment line.
func FuzzLineParse(f *testing.F) {
	for _, s := range seedLines(f) {
		f.Add([]byte(s))
	}
	p := mustParser(f, fuzzFormat)
	f.Fuzz(func(t *testing.T, line []byte) {
		got, err := p.Parse(line, t0)
		if err != nil {
			if len(got) != 0 {
				t.Fatalf("line %q: %d readings with error %v", line, len(got), err)
			}
			return
		}
		if len(got) != 0 && len(got) != len(fuzzFormat.Columns) {
			t.Fatalf("line %q: %d readings, want 0 or %d", line, len(got), len(fuzzFormat.Columns))
		}
		for i, r := range got {
			if r.Channel != fuzzFormat.Columns[i].Channel || r.Logger != "rack2" {
				t.Fatalf("line %q: reading %d labelled %q/%q", line, i, r.Logger, r.Channel)
			}
			if r.Status != StatusOK && r.Status != StatusUnparsable {
				t.Fatalf("line %q: status %v", line, r.Status)
			}
		}
	})
}

// BenchmarkLineParse measures Parse on a six-field line of the demo rack; the goal is at
// least 200,000 lines/s (reported as lines/s).
func BenchmarkLineParse(b *testing.B) {
	p := mustParser(b, fuzzFormat)
	line := []byte("1234.0,412.7,121.3,301.9,49.6,22.3\n")
	var buf []Reading
	b.Run("Parse", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := p.Parse(line, t0); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "lines/s")
	})
	b.Run("AppendParse", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			var err error
			if buf, err = p.AppendParse(buf[:0], line, t0.Add(time.Second)); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "lines/s")
	})
}
