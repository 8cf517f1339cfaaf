package predict

import (
	"math"
	"testing"
)

// TestFitDeadTime: a first-order step response after a dead time (the process
// reaction curve of common practice; the form from memory, no source) is recovered
// from its own noise-free readings — dead time and time constant to their grids'
// spacing, and the crossing of a level ahead of the readings to 3 % of the time left (2 % measured: the grids) —
// and readings with no curvature give the ramp through them (τ = +Inf, or one so long
// that the fit cannot tell it from the ramp), carried on straight.
func TestFitDeadTime(t *testing.T) {
	const dead, tau, base, gain = 12.0, 150.0, 22.0, 40.0
	var ts, cs, ramp []float64
	for s := 0.0; s <= 80; s++ {
		ts = append(ts, s)
		cs = append(cs, base+gain*deadTimeCurve{dead: dead, tau: tau}.shape(s))
		ramp = append(ramp, base+0.2*max(0, s-dead))
	}
	d, _, ok := fitDeadTime(ts, cs)
	if !ok || math.Abs(d.dead-dead) > 80.0/deadTimeDeads || math.Abs(math.Log10(d.tau/tau)) > deadTimeTauStep {
		t.Fatalf("fit %+v (ok %v); want dead time %g s, τ %g s", d, ok, dead, tau)
	}
	level := 45.0
	want := dead - tau*math.Log(1-(level-base)/gain)
	if got, ok := d.crossing(level); !ok || math.Abs(got-want) > 0.03*(want-80) {
		t.Errorf("crossing of %g °C at %.1f s (ok %v), want %.1f s", level, got, ok, want)
	}
	if _, ok := d.crossing(base + gain + 1); ok {
		t.Errorf("a level beyond the fitted end is crossed")
	}
	d, _, ok = fitDeadTime(ts, ramp)
	if !ok || d.tau < 1e4 {
		t.Fatalf("ramp fit %+v (ok %v); want the ramp or a time constant beyond 10⁴ s", d, ok)
	}
	if got, ok := d.crossing(40); !ok || math.Abs(got-(dead+18/0.2)) > 1 {
		t.Errorf("ramp crossing of 40 °C at %.1f s (ok %v), want %.1f s", got, ok, dead+18/0.2)
	}
	if _, _, ok := fitDeadTime(ts[:9], cs[:9]); ok {
		t.Errorf("a fit from 9 readings")
	}
}

// TestDeadTimeCrossingRamp: the central estimate beside peakBound's "not before" is the
// best dead-time fit's crossing; where that fit settles short of the level, the best
// ramp's (the straight stretch carried on: peakBound asks only where the readings'
// own trend still reaches the level); none when the best fit is itself the ramp and
// does not reach it, or when the crossing is not after the last reading. The fits are
// given, so each branch is checked by hand: a first-order curve from 20 °C by 10 K
// with τ 30 s after 5 s reaches 25 °C at 5 − 30·ln(0.5) = 25.8 s; the ramp 0.1 K/s
// after 5 s reaches 35 °C at 155 s.
func TestDeadTimeCrossingRamp(t *testing.T) {
	short := deadTimeCurve{base: 20, gain: 10, dead: 5, tau: 30}
	ramp := deadTimeCurve{base: 20, gain: 0.1, dead: 5, tau: math.Inf(1)}
	for _, c := range []struct {
		name     string
		best     deadTimeCurve
		level    float64
		last     float64
		want     float64 // NaN: none
		wantRamp bool
	}{
		{"the best fit reaches the level", short, 25, 10, 5 - 30*math.Log(0.5), false},
		{"the best fit settles short: the ramp", short, 35, 10, 155, true},
		{"the best fit is the ramp and falls short", deadTimeCurve{base: 20, gain: -0.1, dead: 5, tau: math.Inf(1)}, 35, 10, math.NaN(), false},
		{"the ramp's crossing is already past", short, 35, 160, math.NaN(), true},
	} {
		f := &forecaster{p: &LumpedProblem{Times: []float64{0, c.last}, Celsius: []float64{20, 20}}}
		f.deadTime = func() (deadTimeFits, bool) { return deadTimeFits{c.best, ramp}, true }
		at, fromRamp, ok := f.deadTimeCrossing(c.level)
		switch {
		case math.IsNaN(c.want) && ok:
			t.Errorf("%s: crossing at %.1f s, want none", c.name, at)
		case !math.IsNaN(c.want) && (!ok || math.Abs(at-c.want) > 1e-9 || fromRamp != c.wantRamp):
			t.Errorf("%s: crossing at %.1f s (ramp %v, ok %v), want %.1f s (ramp %v)", c.name, at, fromRamp, ok, c.want, c.wantRamp)
		}
	}
}
