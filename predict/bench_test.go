package predict

import (
	"fmt"
	"math"
	"sync"
	"testing"
	"time"
)

func TestBenchAmbientAndSnapshot(t *testing.T) {
	b := NewBench([]ChannelSpec{
		{Name: "s1", Ambient: "room", Targets: []Target{{Name: "handle", Celsius: 50}}},
		{Name: "room"},
		{Name: "s2", Targets: []Target{{Name: "settled", Celsius: math.NaN(), Within: 1}}},
	}, TrackerOptions{})
	for s := 0.0; s <= 60; s++ {
		b.Observe("room", secs(s), 20)
		b.Observe("s1", secs(s), curve(s))
		b.Observe("s2", secs(s), curve(s)+5)
		b.Observe("nobody", secs(s), 99) // unknown: ignored
	}
	got := b.Snapshot()
	if len(got) != 3 || got[0].Name != "s1" || got[1].Name != "room" || got[2].Name != "s2" {
		t.Fatalf("snapshot order %v, want s1, room, s2", got)
	}
	s1 := got[0]
	if s1.Ambient != "room" || s1.Readings != 61 || !s1.LastTime.Equal(secs(60)) || s1.LastCelsius != curve(60) {
		t.Errorf("s1 state %+v", s1)
	}
	// s1's ambient is measured on "room" (exactly 20 °C); s2's is fitted.
	if f := s1.Forecast; f == nil || f.Params[0].Value != 20 || !math.IsNaN(f.Params[0].StdErr) {
		t.Errorf("s1 forecast %+v, want measured ambient 20 °C", f)
	}
	if f := got[2].Forecast; f == nil || math.Abs(f.Ambient-25) > 0.01 || math.IsNaN(f.Params[0].StdErr) {
		t.Errorf("s2 forecast %+v, want fitted ambient ≈ 25 °C with a stderr", f)
	}
	// Snapshots are copies.
	got[0].Forecast.Params[0].Value = -1
	if b.Snapshot()[0].Forecast.Params[0].Value != 20 {
		t.Error("Snapshot shares forecast storage with the bench")
	}
}

// Run with -race: writers per channel and readers at once.
func TestBenchConcurrent(t *testing.T) {
	var specs []ChannelSpec
	for i := range 4 {
		specs = append(specs, ChannelSpec{Name: fmt.Sprint("c", i), Ambient: "room", Targets: []Target{{Celsius: 40}}})
	}
	specs = append(specs, ChannelSpec{Name: "room"})
	b := NewBench(specs, TrackerOptions{FitEvery: 1})
	var wg sync.WaitGroup
	for _, s := range specs {
		wg.Go(func() {
			for k := 0.0; k < 200; k++ {
				v := curve(k)
				if s.Name == "room" {
					v = 20
				}
				b.Observe(s.Name, secs(k), v)
			}
		})
	}
	wg.Go(func() {
		for range 200 {
			for _, st := range b.Snapshot() {
				if st.Forecast != nil && len(st.Forecast.Targets) > 0 {
					_ = st.Forecast.Targets[0].At
				}
			}
		}
	})
	wg.Wait()
	for _, st := range b.Snapshot() {
		if st.Readings != 200 || st.Forecast == nil && st.Name != "room" {
			t.Errorf("%s: %d readings, forecast %v; want 200 and a forecast", st.Name, st.Readings, st.Forecast)
		}
	}
}

// TestBenchFitStats: the bench counts every fit its trackers run (each new forecast
// is one) and the time they took.
func TestBenchFitStats(t *testing.T) {
	start := time.Date(2026, 12, 3, 9, 0, 0, 0, time.UTC)
	b := NewBench([]ChannelSpec{{Name: "a", Targets: []Target{{Name: "t", Celsius: 50}}},
		{Name: "b", Targets: []Target{{Name: "t", Celsius: 50}}}}, TrackerOptions{})
	seen := map[string]time.Time{}
	forecasts := 0
	for s := 0; s <= 60; s++ {
		at := start.Add(time.Duration(s) * time.Second)
		b.Observe("a", at, 21+99*math.Exp(-float64(s)/300))
		b.Observe("b", at, 21+150*math.Exp(-float64(s)/600))
		for _, st := range b.Snapshot() {
			if f := st.Forecast; f != nil && !f.FittedAt.Equal(seen[st.Name]) {
				seen[st.Name], forecasts = f.FittedAt, forecasts+1
			}
		}
	}
	fits, took := b.FitStats()
	if forecasts < 8 || fits != uint64(forecasts) || took <= 0 {
		t.Errorf("%d fits taking %v; want the %d forecasts seen (about 6 a channel in 60 s at the 10 s pace), and some time", fits, took, forecasts)
	}
}

// TestSnapshotFitted: between fits Snapshot shows each forecast re-anchored to the
// newest reading, SnapshotFitted as its fit left it (what a run's history records and
// a replay reproduces). Our own invented curve, read 20 s ahead of the fit after it:
// 150 °C toward 21 °C, τ = 600 s.
func TestSnapshotFitted(t *testing.T) {
	start := time.Date(2026, 12, 3, 9, 0, 0, 0, time.UTC)
	b := NewBench([]ChannelSpec{{Name: "a", Ambient: "room", Targets: []Target{{Name: "t", Celsius: 50}}}, {Name: "room"}},
		TrackerOptions{FitEvery: time.Hour})
	curve := func(s int) float64 { return 21 + 129*math.Exp(-float64(s)/600) }
	obs := func(s, ahead int) {
		at := start.Add(time.Duration(s) * time.Second)
		b.Observe("room", at, 21)
		b.Observe("a", at, curve(s+ahead))
	}
	for s := 0; s <= 120; s++ {
		obs(s, 0)
	}
	b.trackers[0].Fit()
	for s := 121; s <= 130; s++ {
		obs(s, 20)
	}
	shown, fitted := b.Snapshot()[0].Forecast, b.SnapshotFitted()[0].Forecast
	last := start.Add(130 * time.Second)
	if !fitted.UpdatedAt.Equal(fitted.FittedAt) || !shown.UpdatedAt.Equal(last) || !shown.FittedAt.Equal(fitted.FittedAt) {
		t.Errorf("fitted at %v: updated %v as fitted, %v shown; want the fit's time and the last reading, %v", fitted.FittedAt, fitted.UpdatedAt, shown.UpdatedAt, last)
	}
	// Ten readings 20 s ahead: the median lead is 20 s, so the crossing comes 20 s earlier.
	if d := fitted.Targets[0].At.Sub(shown.Targets[0].At); (d - 20*time.Second).Abs() > time.Second {
		t.Errorf("shown crossing %v, fitted %v: %v earlier, want about 20 s", shown.Targets[0].At, fitted.Targets[0].At, d)
	}
}
