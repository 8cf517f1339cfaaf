package main

import (
	"fmt"
	"io"
	"log/slog"
	"math"
	"net/http"
	"os"
	"strconv"
	"testing"
	"time"

	"context"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/daq/ptytest"
)

// BenchmarkStartup measures a daemon's start on a journal holding 4 M readings (8
// channels over the last 11 h; SETTLE_STARTUP_READINGS for another count): the time
// to answer /healthz (serve_ms) and to finish the journal replay (replay_ms).
func BenchmarkStartup(b *testing.B) {
	n := 4_000_000
	if s := os.Getenv("SETTLE_STARTUP_READINGS"); s != "" {
		var err error
		if n, err = strconv.Atoi(s); err != nil {
			b.Fatalf("SETTLE_STARTUP_READINGS=%q: %v", s, err)
		}
	}
	const chans = 8
	dir := b.TempDir()
	fillJournal(b, dir, n, chans)
	p := ptytest.Open(b) // a logger that is plugged in but sends nothing
	cfg := &config.Config{Listen: "127.0.0.1:0", DataDir: dir,
		Loggers: []config.Logger{{Logger: daq.Logger{Name: "rack", Port: p.Path(), Format: "line",
			Line: daq.LineFormat{Columns: []daq.Column{{Index: 1, Channel: "spec-0"}}}}}}}
	for i := range chans {
		cfg.Channels = append(cfg.Channels, config.Channel{Name: fmt.Sprintf("spec-%d", i),
			Targets: []config.Target{{Name: "handling", Celsius: ptrTo(50.0), Handling: true}}})
	}
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	var serve, replay time.Duration
	b.ResetTimer()
	for range b.N {
		start := time.Now()
		d, err := newDaemon(cfg, log)
		if err != nil {
			b.Fatal(err)
		}
		ctx, cancel := context.WithCancel(context.Background())
		done := make(chan error, 1)
		go func() { done <- d.Run(ctx) }()
		for {
			resp, err := http.Get("http://" + d.Addr() + "/healthz")
			if err == nil {
				resp.Body.Close()
				break
			}
			time.Sleep(time.Millisecond)
		}
		serve += time.Since(start)
		<-d.replay.done()
		replay += time.Since(start)
		cancel()
		if err := <-done; err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(serve.Milliseconds())/float64(b.N), "serve_ms")
	b.ReportMetric(float64(replay.Milliseconds())/float64(b.N), "replay_ms")
}

// fillJournal writes n readings of chans cooling channels, evenly over the last 11 h.
func fillJournal(b *testing.B, dir string, n, chans int) {
	j, err := journal.Open(dir, journal.Options{CommitInterval: time.Hour, BatchSize: 1 << 16,
		Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		b.Fatal(err)
	}
	from := time.Now().Add(-11 * time.Hour)
	step := 11 * time.Hour / time.Duration(n/chans)
	for i := range n {
		k := i / chans
		s := (time.Duration(k) * step).Seconds()
		j.Append(daq.Reading{Logger: "rack", Channel: fmt.Sprintf("spec-%d", i%chans), Time: from.Add(time.Duration(k) * step),
			Celsius: 22 + 600*math.Exp(-s/7200), Status: daq.StatusOK})
		if i%(1<<16) == 0 {
			if err := j.Flush(); err != nil {
				b.Fatal(err)
			}
		}
	}
	if err := j.Close(); err != nil {
		b.Fatal(err)
	}
}
