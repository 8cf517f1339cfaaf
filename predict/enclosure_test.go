package predict

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// ovenRecord simulates a lumped specimen (heat capacity per unit area capJ, J/(m²·K))
// put into an oven at setC after a baseline at the room (roomC) of placedS seconds:
// constant convection hc plus grey-body radiation of emissivity eps to walls at the
// set point (σ from CODATA 2018), small Euler steps, read every dt seconds with
// Gaussian noise of sd °C, until end. It returns the readings and the noise-free
// sensor temperatures.
func ovenRecord(rng *rand.Rand, roomC, setC, capJ, hc, eps, placedS, dt, end, sd float64) (ts, cs, truth []float64) {
	const sigma = 5.670374419e-8
	temp, next := roomC, 0.0
	for s := 0.0; s <= end; s += 0.5 {
		if s >= next {
			ts, truth = append(ts, s), append(truth, temp)
			cs = append(cs, temp+sd*rng.NormFloat64())
			next += dt
		}
		if s < placedS {
			continue
		}
		tk, wk := temp+273.15, setC+273.15
		hr := eps * sigma * (tk*tk + wk*wk) * (tk + wk)
		temp += 0.5 * (hc + hr) * (setC - temp) / capJ
	}
	return ts, cs, truth
}

// TestEnclosureForecast: a specimen put into an oven whose air is not measured and
// whose set point the engine is not given, after two minutes of readings at the room
// (our own invented record: 21 °C room, 200 °C oven, convection 20 W/(m²·K) plus
// radiation at emissivity 0.5, 20 kJ/(m²·K), read every 5 s with 0.1 °C of noise).
// Once the readings have bent toward the oven's level, enclosureForecast fits it with
// no room prior: the baseline is left out (the segment starts after the placement),
// the level lies within its stated 90 % uncertainty of 200 °C, the 195 °C target's
// central estimate lies inside its interval near the truth, a handling target is not
// forecast (the specimen is warming) and a target the readings rose past (60 °C) is
// neither reached nor forecast (a thermocouple catching up with a hot specimen rises
// past the temperatures it will cool back to).
func TestEnclosureForecast(t *testing.T) {
	rng := rand.New(rand.NewPCG(71, 72))
	const placed = 120.0
	ts, cs, truth := ovenRecord(rng, 21, 200, 20000, 20, 0.5, placed, 5, 6000, 0.1)
	cross := ts[slices.IndexFunc(truth, func(v float64) bool { return v >= 195 })]
	targets := []Target{{Name: "set", Celsius: 195}, {Name: "handle", Celsius: 50, Handling: true}, {Name: "passed", Celsius: 60}}
	for _, frac := range []float64{0.25, 0.5} {
		upTo := placed + frac*(cross-placed)
		n := slices.IndexFunc(ts, func(s float64) bool { return s > upTo })
		p, onset, _ := Prepare(ts[:n], cs[:n], nil)
		f := Analyze(p, t0.Add(seconds(onset)), targets, AnalyzeOptions{})
		notes := strings.Join(f.Notes, " | ")
		if !strings.Contains(notes, "have bent toward a level") {
			t.Fatalf("%.0f %%: not forecast from the oven's level; notes: %s", 100*frac, notes)
		}
		if s := f.SegmentStart.Sub(t0).Seconds(); s <= placed || s > placed+5 {
			t.Errorf("%.0f %%: segment starts at %.0f s, want the first reading after the placement at %.0f s", 100*frac, s, placed)
		}
		var u float64
		for _, pa := range f.Params {
			if pa.Name == "ambient_c" {
				u = pa.StdErr
			}
		}
		if math.Abs(f.Ambient-200) > 1.645*u+0.5 {
			t.Errorf("%.0f %%: level %.2f ± %.2f °C (SE), truth 200 °C", 100*frac, f.Ambient, u)
		}
		tf := f.Targets[0]
		at, lo, hi := tf.At.Sub(t0).Seconds(), tf.Earliest.Sub(t0).Seconds(), math.Inf(1)
		if !tf.Latest.IsZero() {
			hi = tf.Latest.Sub(t0).Seconds()
		}
		if tf.State != StatePredicted || tf.At.IsZero() || lo > cross || hi < cross {
			t.Errorf("%.0f %%: 195 °C %s at %.0f s [%.0f, %.0f], truth %.0f s", 100*frac, tf.State, at, lo, hi, cross)
		}
		t.Logf("%.0f %% elapsed: level %.2f °C (SE %.2f); 195 °C at %.0f s [%.0f, %.0f], truth %.0f s: %.1f %% of the remaining time off",
			100*frac, f.Ambient, u, at, lo, hi, cross, 100*math.Abs(at-cross)/(cross-upTo))
		for _, tf := range f.Targets[1:] {
			if tf.State != StateInsufficient || !tf.At.IsZero() || !tf.Earliest.IsZero() {
				t.Errorf("%.0f %%: %s target %s at %v [%v, %v], want insufficient with no time", 100*frac, tf.Target.Name, tf.State, tf.At, tf.Earliest, tf.Latest)
			}
		}
	}
}
