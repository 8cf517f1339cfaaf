package main

import (
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/daq/ptytest"
)

// The issue-14 cases through a real daemon on a pseudo-terminal (logger clock in
// seconds, sent 50× faster than real time): a specimen already hot at the first
// reading, and a 22 → 300 °C placement after only 40 s of baseline, each get an
// automatic run, and GET /api/v1/placement shows the rule's decision.
func TestPlacementHotStartAndShortBaseline(t *testing.T) {
	p := ptytest.Open(t)
	handling := []config.Target{{Name: "handling", Celsius: ptrTo(50.0), Handling: true}}
	cfg := &config.Config{Listen: "127.0.0.1:0", DataDir: t.TempDir(),
		Loggers: []config.Logger{{Logger: daq.Logger{Name: "rack", Port: p.Path(), Format: "line", Line: daq.LineFormat{
			ClockColumn: 1, Columns: []daq.Column{{Index: 2, Channel: "hot-1"}, {Index: 3, Channel: "late-2"}}}}}},
		Channels: []config.Channel{{Name: "hot-1", Targets: handling}, {Name: "late-2", Targets: handling}}}
	d, stop := runDaemonAt(t, cfg)
	defer stop()
	hot := func(s float64) float64 { return 22 + 228*math.Exp(-s/300) }
	late := func(s float64) float64 {
		if s < 40 {
			return 22
		}
		u := s - 40
		return 22 + 278*math.Exp(-u/600)*(1-math.Exp(-u/5))
	}
	for s := 0; s <= 240; s++ {
		fmt.Fprintf(p.Master, "%d,%.2f,%.2f\n", s, hot(float64(s)), late(float64(s)))
		time.Sleep(20 * time.Millisecond)
	}
	starts := map[string]time.Time{}
	for _, ch := range []string{"hot-1", "late-2"} {
		var run journal.Run
		var err error
		for end := time.Now().Add(5 * time.Second); time.Now().Before(end); time.Sleep(50 * time.Millisecond) {
			if run, err = d.rec.j.ActiveRun(ch); err == nil {
				break
			}
		}
		if err != nil {
			t.Errorf("%s: no automatic run: %v", ch, err)
			continue
		}
		if run.Origin != "auto" {
			t.Errorf("%s: run %+v, want origin auto", ch, run)
		}
		starts[ch] = run.Started
	}
	// The hot specimen's run starts at the first reading, the late one's at the last
	// baseline reading (39 s of logger clock later).
	if gap := starts["late-2"].Sub(starts["hot-1"]); gap < 38*time.Second || gap > 40*time.Second {
		t.Errorf("run starts %v apart, want 39 s (hot-1 %v, late-2 %v)", gap, starts["hot-1"], starts["late-2"])
	}
	var st struct {
		Channels map[string]journal.PlacementStatus `json:"channels"`
	}
	getJSON(t, "http://"+d.Addr()+"/api/v1/placement", &st)
	for _, ch := range []string{"hot-1", "late-2"} {
		if s := st.Channels[ch]; s.Decision != "placement: decay seen" || s.Decided == nil {
			t.Errorf("/api/v1/placement %s: %+v, want the decision shown", ch, s)
		}
	}
}
