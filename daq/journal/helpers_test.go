package journal

import (
	"io"
	"log/slog"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

var t0 = time.Date(2026, 3, 14, 9, 0, 0, 0, time.UTC)

// quiet is a logger that drops everything.
var quiet = slog.New(slog.NewTextHandler(io.Discard, nil))

// open opens a journal in a temporary directory and closes it at the end of the test.
func open(t testing.TB, opt Options) (*Journal, string) {
	t.Helper()
	dir := t.TempDir()
	if opt.Logger == nil {
		opt.Logger = quiet
	}
	j, err := Open(dir, opt)
	if err != nil {
		t.Fatalf("Open(%s): %v", dir, err)
	}
	t.Cleanup(func() { j.Close() })
	return j, dir
}

// reading makes the i-th reading of a channel: one per second from t0 at 20 + i/1000 °C.
func reading(channel string, i int) daq.Reading {
	return daq.Reading{Logger: "rack", Channel: channel, Time: t0.Add(time.Duration(i) * time.Second),
		Celsius: 20 + float64(i)/1000, Status: daq.StatusOK}
}

func collect(t testing.TB, j *Journal, channel string, from, to time.Time) []daq.Reading {
	t.Helper()
	var out []daq.Reading
	for r, err := range j.Readings(channel, from, to) {
		if err != nil {
			t.Fatalf("Readings(%s): %v", channel, err)
		}
		out = append(out, r)
	}
	return out
}

func mustFlush(t testing.TB, j *Journal) {
	t.Helper()
	if err := j.Flush(); err != nil {
		t.Fatalf("Flush: %v", err)
	}
}
