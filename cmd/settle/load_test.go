package main

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq/ptytest"
)

// loadDuration is how long the load test feeds the daemon: 60 s, or
// SETTLE_LOAD_MINUTES minutes.
func loadDuration(t *testing.T) time.Duration {
	if s := os.Getenv("SETTLE_LOAD_MINUTES"); s != "" {
		m, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("SETTLE_LOAD_MINUTES=%q: %v", s, err)
		}
		return time.Duration(m * float64(time.Minute))
	}
	if testing.Short() {
		return 10 * time.Second
	}
	return time.Minute
}

// loadRate is the lines per second on each pseudo-terminal: 100, or SETTLE_LOAD_HZ (to
// measure the rate accepted end to end, e.g. 1250 for 10,000 readings/s over the 8).
func loadRate(t *testing.T) int {
	if s := os.Getenv("SETTLE_LOAD_HZ"); s != "" {
		hz, err := strconv.Atoi(s)
		if err != nil || hz <= 0 {
			t.Fatalf("SETTLE_LOAD_HZ=%q: want a whole number of lines per second", s)
		}
		return hz
	}
	return 100
}

// TestLoad100HzEightChannels feeds a daemon 100 lines/s on each of 8 pseudo-terminals
// (cooling curves on channels with targets, so the placement rule and the fits run) and
// asserts that every line sent is in the journal and no reading was dropped.
func TestLoad100HzEightChannels(t *testing.T) {
	const chans = 8
	rate := loadRate(t)
	span := loadDuration(t)
	var cfgText strings.Builder
	fmt.Fprintf(&cfgText, "listen: 127.0.0.1:0\ndata_dir: %s\nloggers:\n", t.TempDir())
	var ptys []*ptytest.PTY
	for i := range chans {
		p := ptytest.Open(t)
		ptys = append(ptys, p)
		fmt.Fprintf(&cfgText, "  - name: rack-%d\n    port: %s\n    line:\n      columns: [{index: 1, channel: spec-%d}]\n", i, p.Path(), i)
	}
	cfgText.WriteString("channels:\n")
	for i := range chans {
		fmt.Fprintf(&cfgText, "  - name: spec-%d\n    targets: [{name: handling, celsius: 50, handling: true}]\n", i)
	}
	path := filepath.Join(t.TempDir(), "settle.yaml")
	if err := os.WriteFile(path, []byte(cfgText.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg, err := config.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	d, err := newDaemon(cfg, slog.New(slog.NewTextHandler(io.Discard, nil)))
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	defer func() {
		cancel()
		<-done
	}()
	<-d.replay.done()
	waitPortsUp(t, d) // bytes sent before a port opens are discarded as stale

	sent := make([]int, chans)
	lag := make([]time.Duration, chans)
	var wg sync.WaitGroup
	start := time.Now()
	for i, p := range ptys {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for n := 0; ; n++ {
				due := start.Add(time.Duration(n) * time.Second / time.Duration(rate))
				if due.Sub(start) >= span {
					return
				}
				time.Sleep(time.Until(due))
				lag[i] = max(lag[i], time.Since(due))
				s := due.Sub(start).Seconds()
				c := 22 + 278*math.Exp(-s/120)
				p.Master.SetWriteDeadline(time.Now().Add(time.Second))
				if _, err := fmt.Fprintf(p.Master, "%.3f\n", c); err != nil {
					t.Errorf("channel %d: line %d refused: %v", i, n, err)
					return
				}
				sent[i]++
			}
		}()
	}
	wg.Wait()
	total := 0
	for _, n := range sent {
		total += n
	}
	// Every line sent reaches the journal's queue within a few seconds.
	var got uint64
	for end := time.Now().Add(15 * time.Second); time.Now().Before(end); time.Sleep(100 * time.Millisecond) {
		h := d.rec.j.Health()
		if got = h.Committed + uint64(h.Pending); got >= uint64(total) {
			break
		}
	}
	if got != uint64(total) {
		t.Errorf("journal holds %d readings of the %d lines sent", got, total)
	}
	if h := d.rec.j.Health(); h.Dropped != 0 {
		t.Errorf("journal dropped %d readings", h.Dropped)
	}
	m := scrape(t, "http://"+d.Addr())
	for _, cause := range []string{dropAnalysis, dropJournal} {
		key := fmt.Sprintf(`settle_readings_dropped_total{cause="%s"}`, cause)
		if n, ok := m[key]; !ok || n != 0 {
			t.Errorf("%s = %v (exported %v), want 0", key, n, ok)
		}
	}
	t.Logf("%d channels × %d lines/s for %v: %d lines sent, %d journaled; writers' worst lag %v",
		chans, rate, span, total, got, maxDuration(lag).Round(time.Millisecond))
}

// waitPortsUp waits until every logger's port is open.
func waitPortsUp(t *testing.T, d *daemon) {
	t.Helper()
	for end := time.Now().Add(10 * time.Second); time.Now().Before(end); time.Sleep(10 * time.Millisecond) {
		up := 0
		for _, p := range d.portStats() {
			if p.Up {
				up++
			}
		}
		if up == len(d.sources) {
			return
		}
	}
	t.Fatal("ports not open after 10 s")
}

func maxDuration(v []time.Duration) time.Duration {
	m := time.Duration(0)
	for _, x := range v {
		m = max(m, x)
	}
	return m
}
