package daq

import (
	"bufio"
	"os"
	"strings"
	"testing"
	"time"
)

// TestStrftimeAgainstPython reads each timestamp of testdata/config/clock/strptime.tsv
// with the layout StrftimeLayout makes and compares with the result of Python's
// datetime.strptime written beside it (the reference; regenerate with
// python3 testdata/config/clock/strptime.py). Both succeed with the same time, or both
// refuse the value.
func TestStrftimeAgainstPython(t *testing.T) {
	f, err := os.Open("../testdata/config/clock/strptime.tsv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows := 0
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if strings.HasPrefix(sc.Text(), "#") {
			continue
		}
		cols := strings.Split(sc.Text(), "\t")
		if len(cols) != 3 {
			t.Fatalf("bad row %q", sc.Text())
		}
		format, value, python := cols[0], cols[1], cols[2]
		rows++
		layout, err := StrftimeLayout(format)
		if err != nil {
			t.Errorf("StrftimeLayout(%q): %v", format, err)
			continue
		}
		got := "error"
		if tm, err := time.Parse(layout, value); err == nil {
			got = tm.Format("2006-01-02T15:04:05.000000")
			if strings.Contains(format, "%z") {
				got += tm.Format("-0700")
			}
		}
		if got != python {
			t.Errorf("%q with %q (layout %q): Go %s, Python %s", value, format, layout, got, python)
		}
	}
	if err := sc.Err(); err != nil || rows < 30 {
		t.Fatalf("read %d rows (%v), want at least 30", rows, err)
	}
}

// The layouts of the common logger timestamps (the README's worked examples), against
// Go's own layout elements.
func TestStrftimeLayouts(t *testing.T) {
	for _, c := range []struct{ format, layout string }{
		{"%Y-%m-%dT%H:%M:%S", "2006-1-2T15:4:5"},
		{"%Y-%m-%d %H:%M:%S", "2006-1-2 15:4:5"},
		{"%d/%m/%Y %H:%M:%S", "2/1/2006 15:4:5"},
		{"%m/%d/%Y %I:%M:%S %p", "1/2/2006 3:4:5 PM"},
		{"%Y-%m-%d %H:%M:%S.%f", "2006-1-2 15:4:5.999999999"},
		{"%Y-%m-%dT%H:%M:%S%:z", "2006-1-2T15:4:5Z07:00"},
		{"%d %b %Y %H:%M:%S %%", "2 Jan 2006 15:4:5 %"},
	} {
		if got, err := StrftimeLayout(c.format); err != nil || got != c.layout {
			t.Errorf("StrftimeLayout(%q) = %q, %v; want %q", c.format, got, err, c.layout)
		}
	}
}

// A format settle cannot read the same way as strptime is refused, naming the token or
// the text (common practice: say what to write instead).
func TestStrftimeErrors(t *testing.T) {
	for _, c := range []struct{ format, want string }{
		{"%Y-%m-%d %H:%M:%Q", "unknown token %Q; known: %Y %y %m %d %j %H %I %M %S %f %p %b %B %a %A %z %:z %%"},
		{"%Y-%m-%d %H:%M:%S %Z", "%Z (a time zone name) cannot be read reliably"},
		{"%Y-%m-%d %H:%M:%", `a lone "%" ends the format`},
		{"%H:%M:%S%f", `%f (fractional seconds) must follow a "." or ","`},
		{"%d/%m/%Y %I:%M", "%I (hour 1–12) needs %p"},
		{"%d/%m/%Y %H:%M %p", "%p (AM or PM) goes with %I"},
		{"%Y-%m-%d 1%H:%M", `the text " 1" between tokens would be read as part of a date or time`},
		{"Mon %H:%M", `the text "Mon " between tokens`},
		{"%m%S", "tokens run together"},
		{"%Y_%d", "tokens run together"},
		{"%%", "has no date or time token"},
		{"%A %p %z", "has no date or time token"},
		{"%Y-%m-%d %H:%M:%S (%H)", `%H repeats a field already in "%Y-%m-%d %H:%M:%S (%H)"`},
		{"%Y-%m-%d %H:%M:%S %z %:z", "%:z repeats a field"}, // both are the zone offset
	} {
		_, err := StrftimeLayout(c.format)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("StrftimeLayout(%q) = %v, want an error with %q", c.format, err, c.want)
		}
	}
}

// ClockLayout also takes the number formats, the names, strftime and Go layouts.
func TestClockLayoutStrftime(t *testing.T) {
	for _, c := range []struct {
		format, layout string
		ok             bool
	}{
		{"", "", true}, {"seconds", "", true}, {"UNIX", "", true},
		{"rfc3339", time.RFC3339, true},
		{"2006-01-02 15:04:05", "2006-01-02 15:04:05", true},
		{"%Y-%m-%d %H:%M:%S", "2006-1-2 15:4:5", true},
		{"dd.mm.yyyy", "", false},
		{"%Y-%q", "", false},
	} {
		layout, ok := ClockLayout(c.format)
		if layout != c.layout || ok != c.ok {
			t.Errorf("ClockLayout(%q) = %q, %v; want %q, %v", c.format, layout, ok, c.layout, c.ok)
		}
	}
}

// FuzzStrftimeLayout feeds any format to StrftimeLayout: no panic, and an accepted
// layout reads what it prints, and prints what it read back to the same time (a
// weekday is printed but not read, so the first round may change it).
func FuzzStrftimeLayout(f *testing.F) {
	for _, s := range []string{"%Y-%m-%dT%H:%M:%S", "%d/%m/%Y %I:%M:%S %p", "%H:%M:%S,%f", "%Y%j", "%%%", "%:z", "Jan%d"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, format string) {
		layout, err := StrftimeLayout(format)
		if err != nil {
			return
		}
		s := clockRef.Format(layout)
		back, err := time.Parse(layout, s)
		if err != nil {
			t.Fatalf("%q → %q cannot read %q: %v", format, layout, s, err)
		}
		again, err := time.Parse(layout, back.Format(layout))
		if err != nil || !again.Equal(back) {
			t.Fatalf("%q → %q: %v printed as %q reads as %v (%v)", format, layout, back, back.Format(layout), again, err)
		}
	})
}

// TestClockFormatsMustPlaceReadings: a clock format without a full date and time is
// refused (every reading would be dated year 0, or lose its hour); a logger clock marked
// UTC by a literal Z, UTC or GMT is read as UTC whatever the host's zone (Berlin here:
// as plain text the readings were an hour off).
func TestClockFormatsMustPlaceReadings(t *testing.T) {
	for _, c := range []struct{ format, missing string }{
		{"%H:%M:%S", "the year, the month, the day"},
		{"15:04:05", "the year, the month, the day"},
		{"%Y-%m-%d", "the hour, the minutes"},
		{"%d/%m %H:%M", "the year"},
		{"%Y-%m-%d %H", "the minutes"},
	} {
		if _, err := ClockFormatLayout(c.format); err == nil || !strings.Contains(err.Error(), "leaves out "+c.missing) {
			t.Errorf("%q: %v, want it refused for leaving out %s", c.format, err, c.missing)
		}
	}
	for _, f := range []string{"%Y-%j %H:%M:%S", "%y%m%d %I:%M %p", "2006-01-02 15:04"} {
		if _, err := ClockFormatLayout(f); err != nil {
			t.Errorf("%q: %v, want it accepted", f, err)
		}
	}
	berlin, err := time.LoadLocation("Europe/Berlin")
	if err != nil {
		t.Skip("no zone database:", err)
	}
	want := time.Date(2026, 12, 3, 14, 5, 9, 0, time.UTC)
	for _, c := range []struct{ format, text string }{
		{"%Y-%m-%dT%H:%M:%SZ", "2026-12-03T14:05:09Z"},
		{"2006-01-02T15:04:05Z", "2026-12-03T14:05:09Z"},
		{"%Y-%m-%d %H:%M:%S UTC", "2026-12-03 14:05:09 UTC"},
		{"%Y-%m-%d %H:%M:%S GMT", "2026-12-03 14:05:09 GMT"},
	} {
		layout, err := ClockFormatLayout(c.format)
		if err != nil {
			t.Errorf("%q: %v", c.format, err)
			continue
		}
		got, err := time.ParseInLocation(layout, c.text, berlin)
		if err != nil || !got.Equal(want) {
			t.Errorf("%q on %q in Berlin: %v (%v), want %v", c.format, c.text, got.UTC(), err, want)
		}
	}
}

func TestClockLayout(t *testing.T) {
	tests := []struct {
		in, want string
		ok       bool
	}{
		{"", "", true}, {"seconds", "", true}, {"UNIX", "", true},
		{"rfc3339", time.RFC3339, true}, {"2006-01-02 15:04", "2006-01-02 15:04", true},
		{"dd.mm.yyyy", "", false}, {"now", "", false},
	}
	for _, tt := range tests {
		if got, ok := ClockLayout(tt.in); got != tt.want || ok != tt.ok {
			t.Errorf("ClockLayout(%q) = %q, %v; want %q, %v", tt.in, got, ok, tt.want, tt.ok)
		}
	}
}
