package csvdialect

import (
	"errors"
	"io"
	"math"
	"strconv"
	"strings"
	"testing"
)

// TestNumber: both decimal marks, and what is not a number. Values are the cells as
// written (no outside source needed).
func TestNumber(t *testing.T) {
	for in, want := range map[string]float64{"21.5": 21.5, "21,5": 21.5, " -0,25 ": -0.25, "1e3": 1000, "7": 7,
		// Thousands grouped, as a spreadsheet writes a furnace's temperatures.
		"1.100,0": 1100, "1,000.5": 1000.5, "-1.234.567,8": -1234567.8, "12.345,": 12345} {
		if v, ok := Number(in); !ok || v != want {
			t.Errorf("Number(%q) = %v, %v; want %v", in, v, ok, want)
		}
	}
	for _, in := range []string{"", " ", "OPEN", "1,2,3", "NaN", "Inf", "-inf", "1e999",
		"1.10,0", "12,34.5", "1234.567,8", ",5.0", "1.100,0,5"} {
		if v, ok := Number(in); ok {
			t.Errorf("Number(%q) = %v, want not a number", in, v)
		}
	}
}

// TestSniff: the separator comes from the header row, past a byte-order mark, blank
// lines and comments; line numbers count every line.
func TestSniff(t *testing.T) {
	for _, tc := range []struct {
		in     string
		comma  rune
		header string
		line   int
	}{
		{"a,b\n1,2\n", ',', "a|b", 1},
		{"\ufeffa;b\r\n1;2\r\n", ';', "a|b", 1},
		{"# made by hand\n\na;b,c;d\n", ';', "a|b,c|d", 3},
		{"a\n1\n", ',', "a", 1},
		// A byte-order mark before a comment or a blank line (a spreadsheet's export
		// with a note on top) does not make that line the header.
		{"\ufeff# bench B\nt_s,temp_c\n0,300\n", ',', "t_s|temp_c", 2},
		{"\ufeff\nt_s;temp_c\n0;300\n", ';', "t_s|temp_c", 2},
	} {
		r, err := NewReader(strings.NewReader(tc.in))
		if err != nil {
			t.Fatalf("%q: %v", tc.in, err)
		}
		if r.Comma != tc.comma || strings.Join(r.Header, "|") != tc.header || r.HeaderLine != tc.line {
			t.Errorf("%q: comma %q header %q line %d; want %q %q %d", tc.in, r.Comma, r.Header, r.HeaderLine, tc.comma, tc.header, tc.line)
		}
	}
	for _, in := range []string{"", "\n\n", "# only a comment\n"} {
		if _, err := NewReader(strings.NewReader(in)); !errors.Is(err, ErrEmpty) {
			t.Errorf("%q: %v, want ErrEmpty", in, err)
		}
	}
}

// FuzzReader: no input panics; every row read comes with a line number at or after the
// header's; Number never returns a non-finite value with ok, and a value it prints
// back with either decimal mark parses to itself.
func FuzzReader(f *testing.F) {
	for _, s := range []string{"t_s,temp_c\n0,1\n", "t_s;temp_c\r\n0;1,5\r\n", "\ufeff# c\n\"a\"\"b\",c\n1,\"2\n3\"\n", "a;b\n\"x;y\";1\n", ""} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		r, err := NewReader(strings.NewReader(string(b)))
		if err != nil {
			return
		}
		for range 10000 {
			rec, line, err := r.Read()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				continue
			}
			if line < r.HeaderLine {
				t.Fatalf("row at line %d before the header's %d", line, r.HeaderLine)
			}
			for _, c := range rec {
				v, ok := Number(c)
				if !ok {
					continue
				}
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("Number(%q) = %v", c, v)
				}
				s := strconv.FormatFloat(v, 'f', -1, 64)
				for _, back := range []string{s, strings.Replace(s, ".", ",", 1)} {
					if w, ok := Number(back); !ok || w != v {
						t.Fatalf("Number(%q) = %v, %v; want %v", back, w, ok, v)
					}
				}
			}
		}
	})
}
