package predict

import (
	"fmt"
	"math"
	"slices"
	"time"
)

// This file bounds the crossing of a target ahead of readings that do not slow quarter
// by quarter (speedFloor's condition): a powered part warming above its room (a
// transistor on a heat sink, a resistor), or any body whose sensor lags it, speeds up
// for a while after a step and slows only later. On the heater board of
// ../shared/realdata the readings run at an almost constant speed for as long as the
// scored cutoffs reach, and no model resolves where they settle; the speed they show
// still bounds the speed to come.
//
// The argument: heat reaching a sensor through a chain of lumped heat capacities
// (heater, sink, sensor), each exchanging heat by conductance with the next and with
// the surroundings, is a linear system whose transfer from the heater's power (or the
// surroundings' temperature) to the sensor has only real negative poles and no zeros —
// for a chain driven at one end and read at the other, 1/∏(1 + sτᵢ). After a step the
// sensor's speed is that transfer's impulse response, the convolution of the
// exponential densities e^(−t/τᵢ)/τᵢ; each is log-concave, and a convolution of
// log-concave functions is log-concave (Prékopa's theorem; from memory). So the
// logarithm of the speed is concave in time: it lies below its tangent at any time,
// and that tangent's slope is at most the slope of a secant ending there. A body
// settling toward a fixed temperature with no lag (one τ) is the special case of a
// speed that only falls.
//
// Where the argument does not hold: a second step in the same direction (a multi-stage
// oven, the heater turned up) starts a new rise, as any change of surroundings breaks
// every forecast here, so the bound is given only for a target the readings' own trend
// still reaches (trendReaches); a step against an earlier transient (the heater turned
// up while the part still cools from a lower setting) adds the old transient's fading
// speed, which is not log-concave with the new one — on the heater board 0.05 K/s
// against 0.1 K/s, held there by the speeds' confidence bounds, not by the argument. A
// "not before" bound that fails says "wait less than needed", never "ready" early, and
// it is never given for a handling target.

// peakFloor is the soonest the readings can reach level, s from the segment start,
// while their speed toward it is log-concave in time (see above), and their own trend
// still reaches it (trendReachesIn, over the same windows): peakFloorIn over quarters
// of the readings, or where quarters are too short (fewer than 5 readings) or too
// noisy to show the speed toward level, over thirds, then halves (peakWindows). Longer
// windows see the speed through more readings, so the few readings of a cutoff soon
// after a step, or a noisy sensor (heater 2 of the heater board, ±0.06 °C against
// 0.05 K/s), still bound it; the secant over them reaches further back, where a speed
// still rising was lower, so it allows a faster rise (the bound errs early). The first
// window count that gives a bound is used, quarters first. ok is false when none does.
func (f *forecaster) peakFloor(level float64) (float64, bool) {
	for _, k := range peakWindows {
		if lo, ok := f.peakFloorIn(k, level); ok && f.trendReachesIn(k, level) {
			return lo, true
		}
	}
	return 0, false
}

// peakWindows are the numbers of windows peakFloor splits the readings into, in the
// order tried.
var peakWindows = []int{4, 3, 2}

// peakFloorIn is peakFloor over k windows of q = n/k readings each (the last k·q
// readings; at least 5 a window), k ≥ 2: rising or falling, the logarithm of the speed
// lies below its tangent at the last window, and the tangent's slope there is at most
// the secant's between the last two windows (a concave function's slope only falls).
// So from the last window's centre c on, the speed is at most v·e^(s(t−c)) with v the
// fastest of the windows' speeds after the first (the first may be the lag itself:
// the quarters' rule) and s = max(0, ln(v_k/v_(k−1)))/Δ (Δ between the last two
// windows' centres): a curve still speeding up is allowed to go on speeding up at the
// rate it last showed, and one past its peak no faster than its fastest window (s = 0;
// its slowing is not relied on). Each speed is a window's least-squares slope, taken on
// the safe side by the one-sided 97.7 % Student-t quantile of its standard error
// inflated for its residuals' lag-1 autocorrelation — v and v_k high, v_(k−1) low —
// and the way left comes from the last window's line (as speedFloor). The crossing
// then comes no sooner than the last reading plus h with ∫₀ʰ v′e^(su) du = way, v′ the
// bound at the last reading. ok is false unless the readings head toward level in the
// last two windows beyond their noise.
func (f *forecaster) peakFloorIn(k int, level float64) (float64, bool) {
	t, c := f.p.Times, f.p.Celsius
	n := len(c)
	q := n / k
	if q < 5 {
		return 0, false
	}
	bounds := func(j int) (a, b int) { return n - (k-j)*q, n - (k-1-j)*q }
	lines := make([]quarterLine, k)
	for j := range lines {
		a, b := bounds(j)
		lines[j] = fitQuarter(t[a:b], c[a:b])
	}
	last := lines[k-1]
	dir := sign(level - last.end)
	if dir == 0 {
		return 0, false
	}
	hi, lo := make([]float64, k), make([]float64, k) // each window's speed toward level, high and low
	z := speedQuantile(q - 2)
	for j, l := range lines {
		a, b := bounds(j)
		m := z * Inflation(l.rho(t[a:b], c[a:b]), maxSpeedInflation) * l.se
		hi[j], lo[j] = dir*l.slope+m, dir*l.slope-m
	}
	if lo[k-2] <= 0 || lo[k-1] <= 0 {
		return 0, false
	}
	centre := func(j int) float64 { a, b := bounds(j); return (t[a] + t[b-1]) / 2 }
	s := max(0, math.Log(hi[k-1]/lo[k-2])/(centre(k-1)-centre(k-2)))
	v := slices.Max(hi[1:]) * math.Exp(s*(t[n-1]-centre(k-1)))
	way := dir * (level - last.end)
	if s*way/v < 1e-9 {
		return t[n-1] + way/v, true
	}
	return t[n-1] + math.Log1p(s*way/v)/s, true
}

// peakBound is the open-ended forecast "not before" of a fixed, non-handling target
// ahead of readings that move toward it (peakFloor), for readings whose direction
// against the settling temperature is not known (no measured ambient; near the room or
// still at their extreme) and which slow too little for speedFloor. No late end: the
// settling temperature of a powered part or an unmeasured oven is not known, and a
// chain of lags slows later than its present curvature says (its speed's decay rate
// rises toward the slowest stage's), so no late end follows from the readings. The
// central estimate, when there is one, is the readings' first-order-plus-dead-time
// fit's crossing (deadTimeCrossing), no sooner than the bound: an estimate that beat
// the linear trend on the heater board (realdata_test.go), never a state and never for
// a handling target. Where that fit settles short of the level, the best ramp's
// crossing, given only when it comes no sooner than the bound (a ramp before it would
// run faster than the readings' speed allows). out unchanged (insufficient) when no bound applies or the bound
// is the last reading itself.
func (f *forecaster) peakBound(out TargetForecast) TargetForecast {
	if out.Target.Handling || out.Target.IsWithin() || f.p.Ambient != nil {
		return out
	}
	c := f.p.Celsius
	n := len(c)
	if n == 0 || math.Abs(out.Celsius-c[n-1]) <= f.tol {
		return out
	}
	lo, ok := f.peakFloor(out.Celsius)
	if !ok || lo <= f.p.Times[n-1] {
		return out
	}
	out.State = StatePredicted
	out.Earliest = f.abs(lo).Add(out.Target.Hold)
	bound := fmt.Sprintf("%.1f °C: not before %s into the segment, no late end: the readings head toward it, and a body heated or cooled through a chain of lags (heater, sink, sensor) after a step speeds up ever more slowly and then only slows, so it cannot cover the way left faster than its recent speed, rising at most as it last rose, takes it there.", out.Celsius, seconds(lo).Round(time.Second))
	at, ramp, ok := f.deadTimeCrossing(out.Celsius)
	switch {
	case ok && ramp && at >= lo:
		out.At = f.abs(at).Add(out.Target.Hold)
		f.note(fmt.Sprintf("%s Central estimate %s into the segment, from the straight stretch of the readings after the lag carried on (an estimate only: a first-order step response after a dead time fitted to them settles short of it, a level the readings' own trend has not bent toward).", bound, seconds(at).Round(time.Second)))
	case ok && !ramp:
		at = max(at, lo)
		out.At = f.abs(at).Add(out.Target.Hold)
		f.note(fmt.Sprintf("%s Central estimate %s into the segment, from a first-order step response after a dead time fitted to the readings (an estimate only: where they show no slowing, it is their straight stretch after the lag carried on).", bound, seconds(at).Round(time.Second)))
	case ok && ramp:
		// A ramp sooner than the bound runs faster than the readings' speed allows.
		f.note(bound + " No central estimate: a first-order step response after a dead time fitted to the readings settles short of it, and their straight stretch carried on would reach it sooner than their speed allows.")
	default:
		f.note(bound + " No central estimate: a first-order step response after a dead time fitted to the readings does not reach it.")
	}
	return out
}
