package main

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"testing"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/ptytest"
	"github.com/settle-lab/settle/exporter"
)

// clockConfig is one logger on path whose lines carry a unix clock, one channel.
func clockConfig(path, dir string) *config.Config {
	return &config.Config{Listen: "127.0.0.1:0", DataDir: dir,
		Loggers: []config.Logger{{Logger: daq.Logger{Name: "rack", Port: path, Format: "line", Line: daq.LineFormat{
			ClockColumn: 1, ClockFormat: "unix", Columns: []daq.Column{{Index: 2, Channel: "plate-1"}}}}}},
		Channels: []config.Channel{{Name: "plate-1", Targets: []config.Target{{Name: "handling", Celsius: ptrTo(50.0), Handling: true}}}}}
}

func ptrTo[T any](v T) *T { return &v }

// runDaemonAt starts a daemon on cfg, waits for its journal replay and its ports, and
// returns it with a function that stops it.
func runDaemonAt(t *testing.T, cfg *config.Config) (*daemon, func()) {
	t.Helper()
	d, err := newDaemon(cfg, slog.New(slog.NewTextHandler(io.Discard, nil)))
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	<-d.replay.done()
	waitPortsUp(t, d)
	return d, func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("daemon: %v", err)
		}
	}
}

// near reports whether a and b are within a millisecond (a unix clock field with
// three decimals, read as a float).
func near(a, b time.Time) bool { return a.Sub(b).Abs() < time.Millisecond }

func lastTime(d *daemon) time.Time {
	for _, s := range d.bench.Snapshot() {
		if s.Name == "plate-1" {
			return s.LastTime
		}
	}
	return time.Time{}
}

// One reading whose clock is ten years ahead (a garbled digit) is a counted clock
// fault: the channel's fit goes on with the next good readings, live and after a
// restart that replays the journal.
func TestFutureClockNeverFreezesTheFit(t *testing.T) {
	p := ptytest.Open(t)
	dir := t.TempDir()
	d, stop := runDaemonAt(t, clockConfig(p.Path(), dir))
	base := time.Now().Truncate(time.Millisecond)
	line := func(at time.Time, c float64) {
		fmt.Fprintf(p.Master, "%.3f,%.2f\n", float64(at.UnixMilli())/1e3, c)
		time.Sleep(20 * time.Millisecond)
	}
	for i := range 20 {
		line(base.Add(time.Duration(i)*100*time.Millisecond), 300-float64(i))
	}
	line(base.Add(10*365*24*time.Hour), 280)
	for i := 20; i < 40; i++ {
		line(base.Add(time.Duration(i)*100*time.Millisecond), 300-float64(i))
	}
	want := base.Add(36 * 100 * time.Millisecond) // the cleaner holds the last 3 readings
	for end := time.Now().Add(5 * time.Second); !near(lastTime(d), want) && time.Now().Before(end); {
		time.Sleep(20 * time.Millisecond)
	}
	if got := lastTime(d); !near(got, want) {
		t.Fatalf("live: the fit's newest reading is at %v, want %v (the last good reading released)", got.Sub(base), want.Sub(base))
	}
	if fs := d.latest.Faults(); len(fs) != 1 || fs[0] != (exporter.FaultCount{Channel: "plate-1", Status: daq.StatusClock, Count: 1}) {
		t.Errorf("fault counts %+v, want one clock fault on plate-1 (settle_channel_faults_total{status=\"clock\"})", fs)
	}
	stop()

	// Restart on the same journal with a silent logger: the replay skips the fault.
	silent := ptytest.Open(t)
	d2, stop2 := runDaemonAt(t, clockConfig(silent.Path(), dir))
	defer stop2()
	if got, want := lastTime(d2), base.Add(39*100*time.Millisecond); !near(got, want) {
		t.Errorf("after restart: the fit's newest reading is at %v, want %v", got.Sub(base), want.Sub(base))
	}
	var clock []daq.Reading
	for r, err := range d2.rec.j.Readings("plate-1", time.Time{}, time.Time{}) {
		if err != nil {
			t.Fatal(err)
		}
		if r.Status == daq.StatusClock {
			clock = append(clock, r)
		}
	}
	if len(clock) != 1 || clock[0].Time.Before(base.Add(time.Hour)) {
		t.Errorf("journal holds clock faults %v, want the one reading ten years ahead", clock)
	}
}
