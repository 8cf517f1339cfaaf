package predict

import (
	"fmt"
	"testing"
	"time"
)

// TestTrackerMinFitGap: with a wall-clock gap far longer than the test, only the first
// scheduled fit runs and FitPending refuses; with a short gap, FitPending catches up the
// fit the schedule called for once the gap has passed, and does nothing when the
// schedule did not call for one (so a daemon's periodic call never fits more often
// than FitEvery and MinNewPoints allow).
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

	short := NewTracker(nil, TrackerOptions{MinFitGap: 50 * time.Millisecond})
	for s := 0.0; s <= 35; s++ {
		short.Add(secs(s), curve(s))
	}
	if f := short.Forecast(); !f.FittedAt.Equal(secs(10)) {
		t.Fatalf("fitted at %v, want 10 s (later fits held back by the gap)", fittedAt(short.Forecast()))
	}
	time.Sleep(60 * time.Millisecond)
	if !short.FitPending() {
		t.Fatal("FitPending did not catch up the scheduled fit after the gap")
	}
	if f := short.Forecast(); !f.FittedAt.Equal(secs(35)) {
		t.Errorf("after FitPending fitted at %v, want 35 s", fittedAt(f))
	}
	short.Add(secs(36), curve(36))
	time.Sleep(60 * time.Millisecond)
	if short.FitPending() {
		t.Error("FitPending fitted one new reading: the schedule wants 10 s and 5 readings")
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
