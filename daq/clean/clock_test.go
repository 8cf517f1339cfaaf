package clean

import (
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

func TestClockCheck(t *testing.T) {
	wall := time.Date(2026, 5, 1, 10, 0, 0, 0, time.UTC)
	loggers := []daq.Logger{
		{Name: "cal", Line: daq.LineFormat{ClockColumn: 1, ClockFormat: "unix"}},
		{Name: "rel", Line: daq.LineFormat{ClockColumn: 1}},
	}
	calendar := map[string]bool{}
	for _, l := range loggers {
		calendar[l.Name] = l.Line.CalendarClock()
	}
	type step struct {
		logger string
		ahead  time.Duration // reading time minus wall time
		wallS  int           // wall seconds since the start
		want   daq.Status
	}
	for _, tc := range []struct {
		name  string
		steps []step
	}{
		{"calendar clock ten years ahead", []step{
			{"cal", 0, 0, daq.StatusOK},
			{"cal", 10 * 365 * 24 * time.Hour, 1, daq.StatusClock},
			{"cal", 2 * time.Second, 2, daq.StatusOK},
		}},
		{"calendar clock a few minutes fast is fine", []step{
			{"cal", 3 * time.Minute, 0, daq.StatusOK},
			{"cal", 3 * time.Minute, 1, daq.StatusOK},
		}},
		{"garbled digit: one jump ahead, then back", []step{
			{"rel", 0, 0, daq.StatusOK},
			{"rel", 0, 1, daq.StatusOK},
			{"rel", 9000 * time.Second, 2, daq.StatusClock},
			{"rel", 0, 3, daq.StatusOK},
		}},
		{"a time-lapse at 60x is not a jump", []step{
			{"rel", 0, 0, daq.StatusOK},
			{"rel", 59 * time.Second, 1, daq.StatusOK},
			{"rel", 118 * time.Second, 2, daq.StatusOK},
		}},
		{"a clock reset ahead is accepted after five readings", []step{
			{"rel", 0, 0, daq.StatusOK},
			{"rel", 24 * time.Hour, 1, daq.StatusClock},
			{"rel", 24 * time.Hour, 2, daq.StatusClock},
			{"rel", 24 * time.Hour, 3, daq.StatusClock},
			{"rel", 24 * time.Hour, 4, daq.StatusClock},
			{"rel", 24 * time.Hour, 5, daq.StatusClock},
			{"rel", 24 * time.Hour, 6, daq.StatusOK},
		}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := NewClockCheck(ClockOptions{Calendar: calendar})
			for i, s := range tc.steps {
				now := wall.Add(time.Duration(s.wallS) * time.Second)
				r := daq.Reading{Logger: s.logger, Channel: "c1", Time: now.Add(s.ahead), Celsius: 300, Status: daq.StatusOK}
				if got := c.Check(r, now); got.Status != s.want {
					t.Errorf("step %d: status %s, want %s", i, got.Status, s.want)
				}
			}
		})
	}
}
