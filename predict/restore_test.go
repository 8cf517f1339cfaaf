package predict

import (
	"fmt"
	"testing"
	"time"
)

// TestTrackerMinFitGap: with a wall-clock gap far longer than the test, only the first
// scheduled fit runs, FitPending refuses inside the gap, and with no gap FitPending
// fits the readings that arrived after the last scheduled fit.
func TestTrackerMinFitGap(t *testing.T) {
	gated := NewTracker(nil, TrackerOptions{MinFitGap: time.Hour})
	for s := 0.0; s <= 60; s++ {
		gated.Add(secs(s), curve(s))
	}
	if f := gated.Forecast(); f == nil || !f.FittedAt.Equal(secs(10)) {
		t.Fatalf("gated tracker fitted at %v, want only the first fit at 10 s", fittedAt(f))
	}
	if gated.FitPending() {
		t.Error("FitPending fitted inside the wall-clock gap")
	}

	free := NewTracker(nil, TrackerOptions{})
	for s := 0.0; s <= 23; s++ {
		free.Add(secs(s), curve(s))
	}
	if f := free.Forecast(); !f.FittedAt.Equal(secs(20)) {
		t.Fatalf("fitted at %v, want 20 s", fittedAt(f))
	}
	if !free.FitPending() {
		t.Fatal("FitPending did not fit the readings after 20 s")
	}
	if f := free.Forecast(); !f.FittedAt.Equal(secs(23)) {
		t.Errorf("after FitPending fitted at %v, want 23 s", fittedAt(f))
	}
	if free.FitPending() {
		t.Error("FitPending fitted again with no new readings")
	}
}

// TestBenchRestore: a restore gives the same forecast as feeding the readings one by
// one and then forcing a fit, and leaves the bench fitting on schedule afterwards.
func TestBenchRestore(t *testing.T) {
	specs := []ChannelSpec{{Name: "disc", Targets: []Target{{Name: "handle", Celsius: 50}}}}
	feed := func(observe func(string, time.Time, float64)) {
		for s := 0.0; s <= 600; s += 2 {
			observe("disc", secs(s), curve(s))
		}
	}
	restored := NewBench(specs, TrackerOptions{})
	restored.Restore(feed)
	live := NewBench(specs, TrackerOptions{})
	feed(live.Observe)
	live.trackers[0].Fit()

	got, want := restored.Snapshot()[0].Forecast, live.Snapshot()[0].Forecast
	if got == nil || want == nil {
		t.Fatalf("forecasts: restored %v, live %v", got, want)
	}
	if !got.FittedAt.Equal(secs(600)) {
		t.Errorf("restored forecast fitted at %v, want 600 s (the last reading)", fittedAt(got))
	}
	got.Curve, want.Curve = nil, nil
	// Compared as printed: NaN fields (Biot) never DeepEqual themselves.
	if fmt.Sprintf("%+v", got) != fmt.Sprintf("%+v", want) {
		t.Errorf("restored forecast differs from the live one:\n got %+v\nwant %+v", got, want)
	}
	for s := 602.0; s <= 612; s += 2 {
		restored.Observe("disc", secs(s), curve(s))
	}
	if f := restored.Snapshot()[0].Forecast; !f.FittedAt.Equal(secs(610)) {
		t.Errorf("after restore the schedule fitted at %v, want 610 s", fittedAt(f))
	}
}

func fittedAt(f *Forecast) any {
	if f == nil {
		return "never"
	}
	return f.FittedAt.Sub(t0)
}
