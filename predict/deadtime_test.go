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
	d, ok := fitDeadTime(ts, cs)
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
	d, ok = fitDeadTime(ts, ramp)
	if !ok || d.tau < 1e4 {
		t.Fatalf("ramp fit %+v (ok %v); want the ramp or a time constant beyond 10⁴ s", d, ok)
	}
	if got, ok := d.crossing(40); !ok || math.Abs(got-(dead+18/0.2)) > 1 {
		t.Errorf("ramp crossing of 40 °C at %.1f s (ok %v), want %.1f s", got, ok, dead+18/0.2)
	}
	if _, ok := fitDeadTime(ts[:9], cs[:9]); ok {
		t.Errorf("a fit from 9 readings")
	}
}
