package runs

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
)

// engineSpecs is a bench like a configuration's: rack-3 with its targets and the room
// measured on channel room.
var engineSpecs = []predict.ChannelSpec{
	{Name: "rack-3", Ambient: "room", Targets: []predict.Target{
		{Name: "handle", Celsius: 45, Handling: true}, {Name: "settled", Celsius: math.NaN(), Within: 2}}},
	{Name: "room", Role: predict.RoleAmbient},
}

// TestEngineReplaysTheLiveForecast records the demo cooling (180 → 22 °C, τ = 600 s,
// our own invented scenario) with a measured room that drifts by 0.3 °C, while a live
// bench fits it on its schedule as the daemon does; the run stops with RecordFinal of
// the live fit, as the daemon's stop handler does. Engine.Forecast must then give
// that live fit exactly: model, parameters, ambient, intervals; and Refit, which
// fits its own ambient, must not (the disagreement issue 14 reported). The live view
// re-anchors the fit to the 4 readings after it: the same states, predicted times
// moved together.
func TestEngineReplaysTheLiveForecast(t *testing.T) {
	j := openJournal(t)
	opt := predict.TrackerOptions{MinFitGap: 0}
	live := predict.NewBench(engineSpecs, opt)
	targets, err := predict.TargetsJSON(engineSpecs[0].Targets)
	if err != nil {
		t.Fatal(err)
	}
	run, err := j.StartRun(journal.RunSpec{Channel: "rack-3", Specimen: "S-2026-044", Targets: targets, Origin: "cli", Start: t0})
	if err != nil {
		t.Fatal(err)
	}
	live.SetPlaced("rack-3", true)
	rng := rand.New(rand.NewPCG(14, 2))
	for s := 0; s <= 1508; s += 2 {
		at := t0.Add(time.Duration(s) * time.Second)
		room := 22 + 0.3*float64(s)/1500 + 0.05*rng.NormFloat64()
		c := room + (demoInitial-22)*math.Exp(-float64(s)/demoTau) + 0.1*rng.NormFloat64()
		for _, r := range []daq.Reading{ // one logger line: the specimen, then the room
			{Logger: "bench-a", Channel: "rack-3", Time: at, Celsius: c, Status: daq.StatusOK},
			{Logger: "bench-a", Channel: "room", Time: at, Celsius: room, Status: daq.StatusOK},
		} {
			j.Append(r)
			live.Observe(r.Channel, r.Time, r.Celsius)
		}
		if s%10 == 0 {
			RecordBench(j, live.SnapshotFitted())
		}
	}
	// Readings after the last fit: the live forecast has not seen them, the replay
	// must not either.
	want := live.SnapshotFitted()[0].Forecast
	shown := live.Snapshot()[0].Forecast
	for i, tf := range shown.Targets {
		w := want.Targets[i]
		if tf.State != w.State || tf.Earliest.Sub(w.Earliest) != tf.At.Sub(w.At) || tf.Latest.Sub(w.Latest) != tf.At.Sub(w.At) {
			t.Errorf("target %s shown %s %v [%v, %v], fitted %s %v [%v, %v]: want the same state, times moved together",
				tf.Target.Name, tf.State, tf.At, tf.Earliest, tf.Latest, w.State, w.At, w.Earliest, w.Latest)
		}
	}
	if !shown.UpdatedAt.Equal(t0.Add(1508 * time.Second)) {
		t.Errorf("the live view reflects the reading at %v, want the last, at 1508 s", shown.UpdatedAt)
	}
	if !want.FittedAt.Equal(t0.Add(1500 * time.Second)) {
		t.Fatalf("live fit at %v, want the last at 1500 s (4 readings after it unfitted)", want.FittedAt)
	}
	RecordFinal(j, run.ID, want)
	if err := j.Flush(); err != nil {
		t.Fatal(err)
	}
	if run, err = j.StopRun(run.ID, t0.Add(1508*time.Second)); err != nil {
		t.Fatal(err)
	}
	got, err := Engine{Specs: engineSpecs, Options: opt}.Forecast(j, run)
	if err != nil || got == nil {
		t.Fatalf("replay: %v, %v", got, err)
	}
	same := func(a, b *predict.Forecast) bool {
		return a.Model == b.Model && a.Points == b.Points && a.FittedAt.Equal(b.FittedAt) && a.SegmentStart.Equal(b.SegmentStart) &&
			a.Ambient == b.Ambient && a.RMSE == b.RMSE && a.TimeConstant == b.TimeConstant && sameParams(a.Params, b.Params) &&
			sameTargets(a.Targets, b.Targets)
	}
	if !same(got, want) {
		t.Errorf("replay %s %d points ambient %v tau %v %+v\nlive   %s %d points ambient %v tau %v %+v",
			got.Model, got.Points, got.Ambient, got.TimeConstant, got.Targets, want.Model, want.Points, want.Ambient, want.TimeConstant, want.Targets)
	}
	// The engine takes the measured room through a first-order lag of the specimen's own
	// time constant (predict's lagAmbient: a body follows its air only as fast as it
	// cools), so a room rising 0.3 °C in 1500 s is seen 0.0002 K/s × 600 s = 0.12 K
	// behind its last reading, 22.3 °C.
	if want := 22.3 - 0.3/1500*demoTau; math.Abs(got.Ambient-want) > 0.1 {
		t.Errorf("ambient %v, want the measured room at the end lagged by the specimen's τ, %.2f ± 0.1 °C", got.Ambient, want)
	}
	refit, err := Refit(j, run, opt)
	if err != nil {
		t.Fatal(err)
	}
	if same(refit, want) {
		t.Error("Refit agrees with the live forecast too: the test cannot tell the engine from a refit")
	}
}

func sameParams(a, b []predict.Param) bool {
	eq := func(x, y float64) bool { return x == y || math.IsNaN(x) && math.IsNaN(y) }
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i].Name != b[i].Name || a[i].Unit != b[i].Unit || !eq(a[i].Value, b[i].Value) || !eq(a[i].StdErr, b[i].StdErr) {
			return false
		}
	}
	return true
}

func sameTargets(a, b []predict.TargetForecast) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		x, y := a[i], b[i]
		if x.Target.Name != y.Target.Name || x.State != y.State || !x.At.Equal(y.At) || !x.Earliest.Equal(y.Earliest) || !x.Latest.Equal(y.Latest) {
			return false
		}
	}
	return true
}
