package main

import (
	"context"
	"io"
	"math"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq/ptytest"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/internal/forecastjson"
)

// pluggedWriter writes to the pseudo-terminal behind a link while it is plugged in
// and drops what it is given while it is not: a logger that keeps sending into a
// pulled cable.
type pluggedWriter struct {
	mu   sync.Mutex
	link *ptytest.Link
	out  bool // unplugged
}

func (w *pluggedWriter) Write(b []byte) (int, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	if w.out || w.link.PTY() == nil {
		return len(b), nil
	}
	_, _ = w.link.PTY().Master.Write(b) // a full terminal drops, as a real line would
	return len(b), nil
}

func (w *pluggedWriter) unplug() { w.mu.Lock(); w.link.Unplug(); w.out = true; w.mu.Unlock() }
func (w *pluggedWriter) replug() { w.mu.Lock(); w.link.Replug(); w.out = false; w.mu.Unlock() }

// TestUnplugMidCoolingKeepsForecast pulls the logger's cable for 40 s (wall) in the
// middle of a cooling curve with known parameters, played at 60× through a real
// pseudo-terminal behind a by-id-style link and go.bug.st/serial. The handling target
// (50 °C, crossed at 1,675 s of logger time) is crossed while the cable is out. After
// the replug the segment must continue (same start), the crossing must be the fitted
// one inside the gap, marked estimated, and lie within the interval forecast before
// the gap; the run's record must say the same.
func TestUnplugMidCoolingKeepsForecast(t *testing.T) {
	if testing.Short() {
		t.Skip("plays 70 s of a curve; skipped with -short")
	}
	k := knownCurve{ambient: 22, excess: 180, tau: 900}
	const until = 4200.0
	rep, err := sim.NewReplay(strings.NewReader(k.csv(until, 3)), "known.csv")
	if err != nil {
		t.Fatal(err)
	}
	link := ptytest.NewLink(t)
	cfg := rep.DemoConfig(link.Path)
	for i := range cfg.Channels {
		if cfg.Channels[i].Name == sim.ReplayChannel {
			cfg.Channels[i].Run = &config.Run{Specimen: "K-900"} // so the run's record is kept
		}
	}
	base := startDaemon(t, &cfg)
	w := &pluggedWriter{link: link}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	simDone := make(chan error, 1)
	go func() { simDone <- sim.Run(ctx, w, rep, sim.Options{Speed: 60}) }()

	handling := `{channel="replay",target="handling"}`
	// Up to 960 s of logger time (16 s of wall time): a forecast with an interval.
	waitFor(t, base, 60*time.Second, func(m map[string]float64) bool {
		return m[`settle_fit_points{channel="replay"}`] >= 400 && m["settle_target_eta_latest_timestamp_seconds"+handling] > 0
	})
	before := channelView(t, base, "replay")
	w.unplug()
	time.Sleep(40 * time.Second) // 2,400 s of logger time: 50 °C is crossed at 1,675 s
	w.replug()
	post := waitFor(t, base, 60*time.Second, func(m map[string]float64) bool {
		return m["settle_target_reached"+handling] == 1
	})
	after := channelView(t, base, "replay")
	cancel()
	<-simDone

	if !after.Forecast.SegmentStart.Equal(before.Forecast.SegmentStart) {
		t.Errorf("segment start moved from %v to %v across the unplug", before.Forecast.SegmentStart, after.Forecast.SegmentStart)
	}
	pt, at := targetNamed(before, "handling"), targetNamed(after, "handling")
	if pt.State != "predicted" || pt.Earliest == nil || pt.Latest == nil {
		t.Fatalf("before the unplug: %+v, want a predicted interval", pt)
	}
	if at.State != "reached" || !at.Estimated || at.At == nil {
		t.Fatalf("after the replug: state %s estimated %v at %v, want reached at an estimated time", at.State, at.Estimated, at.At)
	}
	if at.At.Before(pt.Earliest.Add(-2*time.Second)) || at.At.After(pt.Latest.Add(2*time.Second)) {
		t.Errorf("estimated crossing %v outside the pre-gap interval [%v, %v]", at.At, pt.Earliest, pt.Latest)
	}
	// The segment starts at the first reading (logger time 0), so the crossing's
	// logger time is its distance from the segment start.
	if d := at.At.Sub(before.Forecast.SegmentStart).Seconds() - k.crossing(50); math.Abs(d) > 0.03*k.crossing(50) {
		t.Errorf("estimated crossing %.0f s after the segment start, true %.0f s", at.At.Sub(before.Forecast.SegmentStart).Seconds(), k.crossing(50))
	}
	if post[`settle_port_reconnects_total{logger="rack2"}`] < 1 {
		t.Errorf("port reconnects %v, want at least 1", post[`settle_port_reconnects_total{logger="rack2"}`])
	}
	checkRecordedEstimate(t, base)
}

// checkRecordedEstimate waits for the run's report to record the handling crossing and
// checks it is marked estimated.
func checkRecordedEstimate(t *testing.T, base string) {
	t.Helper()
	var list struct {
		Runs []struct{ ID, Channel string } `json:"runs"`
	}
	getJSON(t, base+"/api/v1/runs", &list)
	var id string
	for _, r := range list.Runs {
		if r.Channel == "replay" {
			id = r.ID
		}
	}
	if id == "" {
		t.Fatalf("no run on the replay channel: %+v", list.Runs)
	}
	var sum struct {
		Targets []struct {
			Name            string     `json:"name"`
			Actual          *time.Time `json:"actual"`
			ActualEstimated bool       `json:"actual_estimated"`
		} `json:"targets"`
	}
	// The forecast history is offered to the journal every 5 s and committed every
	// second: after 7 s the crossing comes from the record, not the live forecast.
	recorded := time.Now().Add(7 * time.Second)
	end := time.Now().Add(30 * time.Second) // a hang guard
	for {
		getJSON(t, base+"/api/v1/runs/"+id+"/summary.json", &sum)
		for _, tg := range sum.Targets {
			if tg.Name == "handling" && tg.Actual != nil && time.Now().After(recorded) {
				if !tg.ActualEstimated {
					t.Errorf("recorded crossing %v not marked estimated", tg.Actual)
				}
				return
			}
		}
		if time.Now().After(end) {
			t.Fatalf("the run's report never recorded the handling crossing: %+v", sum.Targets)
		}
		time.Sleep(500 * time.Millisecond)
	}
}

// channelView fetches one channel from the API.
func channelView(t *testing.T, base, name string) exporter.ChannelJSON {
	t.Helper()
	var ch exporter.ChannelJSON
	getJSON(t, base+"/api/v1/channels/"+name, &ch)
	if ch.Forecast == nil || ch.Latest == nil {
		t.Fatalf("channel %s has no forecast or reading: %+v", name, ch)
	}
	return ch
}

func targetNamed(ch exporter.ChannelJSON, name string) forecastjson.TargetForecast {
	for _, tg := range ch.Targets {
		if tg.Name == name {
			return tg
		}
	}
	return forecastjson.TargetForecast{}
}

var _ io.Writer = (*pluggedWriter)(nil)
