package journal

import (
	"math"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict"
)

// TestReplayRebuildsForecast records a cooling curve while a bench forecasts it, closes
// the journal as a stopped daemon would, reopens it and replays it into a fresh bench:
// the rebuilt forecast equals the original, so forecasts resume at once on restart.
func TestReplayRebuildsForecast(t *testing.T) {
	dir := t.TempDir()
	j, err := Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	specs := []predict.ChannelSpec{{Name: "c1", Targets: []predict.Target{{Name: "handle", Celsius: 45}}}}
	before := predict.NewBench(specs, predict.TrackerOptions{FitEvery: 5 * time.Minute})
	for s := 0; s <= 1800; s += 6 { // Newton cooling 160 → 20 °C, τ = 500 s (invented)
		r := daq.Reading{Logger: "rack", Channel: "c1", Time: t0.Add(time.Duration(s) * time.Second),
			Celsius: 20 + 140*math.Exp(-float64(s)/500), Status: daq.StatusOK}
		j.Append(r)
		before.Observe(r.Channel, r.Time, r.Celsius)
	}
	if err := j.Close(); err != nil {
		t.Fatal(err)
	}
	j, err = Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	after := predict.NewBench(specs, predict.TrackerOptions{FitEvery: 5 * time.Minute})
	if err := j.Replay(t0, func(r daq.Reading) {
		if r.OK() {
			after.Observe(r.Channel, r.Time, r.Celsius)
		}
	}); err != nil {
		t.Fatal(err)
	}
	a, b := before.Snapshot()[0], after.Snapshot()[0]
	if a.Forecast == nil || b.Forecast == nil {
		t.Fatalf("forecasts %v and %v, want both", a.Forecast, b.Forecast)
	}
	if a.Readings != b.Readings || a.Forecast.TimeConstant != b.Forecast.TimeConstant || !a.Forecast.Targets[0].At.Equal(b.Forecast.Targets[0].At) {
		t.Errorf("rebuilt: %d readings, τ %v, handle %v; original: %d, %v, %v",
			b.Readings, b.Forecast.TimeConstant, b.Forecast.Targets[0].At, a.Readings, a.Forecast.TimeConstant, a.Forecast.Targets[0].At)
	}
	if got := b.Forecast.TimeConstant.Seconds(); math.Abs(got-500) > 1 {
		t.Errorf("rebuilt τ = %v s, want 500 s", got)
	}
}
