package daq

import (
	"errors"
	"strings"
	"testing"
	"time"
)

var t0 = time.Date(2025, 3, 14, 15, 0, 0, 0, time.UTC)

// rackFormat is clock in field 1, two specimens and an ambient in fields 2, 3 and 5.
var rackFormat = LineFormat{
	ClockColumn: 1,
	Columns: []Column{
		{Index: 2, Channel: "steel"},
		{Index: 3, Channel: "alu"},
		{Index: 5, Channel: "amb"},
	},
}

func mustParser(t testing.TB, f LineFormat) *LineParser {
	t.Helper()
	p, err := NewLineParser("rack2", f)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func TestLineParserValues(t *testing.T) {
	p := mustParser(t, rackFormat)
	got, err := p.Parse([]byte("10.0, 812.3,197.5,x,22.1\r\n"), t0)
	if err != nil {
		t.Fatal(err)
	}
	want := []Reading{
		{Logger: "rack2", Channel: "steel", Time: t0, Celsius: 812.3},
		{Logger: "rack2", Channel: "alu", Time: t0, Celsius: 197.5},
		{Logger: "rack2", Channel: "amb", Time: t0, Celsius: 22.1},
	}
	if len(got) != len(want) {
		t.Fatalf("got %d readings, want %d: %+v", len(got), len(want), got)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("reading %d = %+v, want %+v", i, got[i], want[i])
		}
	}
}

func TestLineParserUnparsableKept(t *testing.T) {
	p := mustParser(t, rackFormat)
	tests := []struct{ field, raw string }{
		{"OPEN", "OPEN"}, {"", ""}, {"NaN", "NaN"}, {"+Inf", "+Inf"}, {"1.2.3", "1.2.3"},
	}
	for _, tc := range tests {
		got, err := p.Parse([]byte("1,"+tc.field+",20,,21"), t0)
		if err != nil {
			t.Fatalf("field %q: %v", tc.field, err)
		}
		if got[0].Status != StatusUnparsable || got[0].Raw != tc.raw {
			t.Errorf("field %q: got status %v raw %q, want unparsable raw %q", tc.field, got[0].Status, got[0].Raw, tc.raw)
		}
		if !got[1].OK() || got[1].Celsius != 20 {
			t.Errorf("field %q: next column = %+v, want 20 °C ok", tc.field, got[1])
		}
	}
}

func TestLineParserIgnoresBlankAndComments(t *testing.T) {
	p := mustParser(t, rackFormat)
	for _, line := range []string{"", "   \r\n", "# t_s,steel,alu", "  # indented comment"} {
		got, err := p.Parse([]byte(line), t0)
		if err != nil || len(got) != 0 {
			t.Errorf("line %q: got %v, %v; want no readings and no error", line, got, err)
		}
	}
}

func TestLineParserErrors(t *testing.T) {
	p := mustParser(t, rackFormat)
	tests := []struct {
		line string
		want error
	}{
		{"1,2,3", ErrShortLine},
		{"1,2,3,4", ErrShortLine},
		{"garbage", ErrShortLine},
		{"abc,1,2,3,4", ErrBadClock},
		{",1,2,3,4", ErrBadClock},
		{"NaN,1,2,3,4", ErrBadClock},
		{"1e300,1,2,3,4", ErrBadClock},
	}
	for _, tc := range tests {
		got, err := p.Parse([]byte(tc.line), t0)
		if !errors.Is(err, tc.want) {
			t.Errorf("line %q: err = %v, want %v", tc.line, err, tc.want)
		}
		if len(got) != 0 {
			t.Errorf("line %q: got %d readings with the error, want none", tc.line, len(got))
		}
		if err != nil && !strings.Contains(err.Error(), `"rack2"`) {
			t.Errorf("line %q: error %q does not name the logger", tc.line, err)
		}
	}
}

func TestLineParserClockAnchor(t *testing.T) {
	p := mustParser(t, rackFormat)
	steps := []struct {
		clock    string
		received time.Duration // after t0
		want     time.Duration // reading time after t0
	}{
		{"100.0", 0, 0}, // first line anchors: anchor = t0 − 100 s
		{"102.0", 30 * time.Second, 2 * time.Second}, // time-lapse: logger clock wins over receive time
		{"104.5", 31 * time.Second, 4500 * time.Millisecond},
		{"3.0", 40 * time.Second, 40 * time.Second}, // clock went back: logger restarted, re-anchor
		{"5.0", 41 * time.Second, 42 * time.Second}, // keeps the new anchor
	}
	for i, s := range steps {
		got, err := p.Parse([]byte(s.clock+",1,2,3,4"), t0.Add(s.received))
		if err != nil {
			t.Fatalf("step %d: %v", i, err)
		}
		if want := t0.Add(s.want); !got[0].Time.Equal(want) {
			t.Errorf("step %d (clock %s): time = %v, want %v", i, s.clock, got[0].Time, want)
		}
	}
}

func TestLineParserHostTimeAndSeparator(t *testing.T) {
	p := mustParser(t, LineFormat{Separator: "\t", Columns: []Column{{Index: 1, Channel: "a"}, {Index: 2, Channel: "b"}}})
	got, err := p.Parse([]byte("21.5\t-3.25"), t0)
	if err != nil {
		t.Fatal(err)
	}
	if got[0].Celsius != 21.5 || got[1].Celsius != -3.25 || !got[1].Time.Equal(t0) {
		t.Errorf("got %+v, want 21.5 and -3.25 at receive time", got)
	}
}

func TestNewLineParserRejects(t *testing.T) {
	tests := []struct {
		name string
		f    LineFormat
		want string
	}{
		{"no columns", LineFormat{}, `logger "rack2": line.columns: at least one column is needed`},
		{"negative clock", LineFormat{ClockColumn: -1, Columns: []Column{{Index: 1, Channel: "a"}}}, `logger "rack2": line.clock_column -1: must be 0 (host time) or a 1-based field index`},
		{"zero index", LineFormat{Columns: []Column{{Index: 0, Channel: "a"}}}, `logger "rack2": line.columns[0]: index 0: must be a 1-based field index`},
		{"clock clash", LineFormat{ClockColumn: 1, Columns: []Column{{Index: 1, Channel: "a"}}}, `logger "rack2": line.columns[0]: index 1: is the clock column`},
		{"no channel", LineFormat{Columns: []Column{{Index: 1}}}, `logger "rack2": line.columns[0]: channel: must not be empty`},
		{"channel twice", LineFormat{Columns: []Column{{Index: 1, Channel: "a"}, {Index: 2, Channel: "a"}}}, `logger "rack2": line.columns[1]: channel "a": appears twice`},
		{"index twice", LineFormat{Columns: []Column{{Index: 1, Channel: "a"}, {Index: 1, Channel: "b"}}}, `logger "rack2": line.columns[1]: index 1 is used twice`},
	}
	for _, tc := range tests {
		_, err := NewLineParser("rack2", tc.f)
		if err == nil || err.Error() != tc.want {
			t.Errorf("%s: err = %v, want %q", tc.name, err, tc.want)
		}
	}
}
