package predict

import (
	"fmt"
	"math"
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
// while their speed toward it is log-concave in time (see above): rising or falling,
// the logarithm of the speed lies below its tangent at the last quarter, and the
// tangent's slope there is at most the secant's between the third and last quarters
// (a concave function's slope only falls). So from the last quarter's centre c₄ on the
// speed is at most v·e^(s(t−c₄)) with v the fastest of the last three quarters' speeds
// and s = max(0, ln(v₄/v₃))/Δ (Δ between the quarters' centres): a curve still speeding
// up is allowed to go on speeding up at the rate it last showed, and one past its peak
// no faster than its fastest quarter (s = 0; its slowing is not relied on). Each speed
// is taken on the safe side by the one-sided 97.7 % Student-t quantile of its standard
// error inflated for its residuals' lag-1 autocorrelation — v and v₄ high, v₃ low —
// and the way left comes from the last quarter's least-squares line (as speedFloor).
// The crossing then comes no sooner than the last reading plus h with
// ∫₀ʰ v′e^(su) du = way, v′ the bound at the last reading. ok is false unless the
// readings head toward level in the third and last quarters beyond their noise (at
// least 5 readings each).
func (f *forecaster) peakFloor(level float64) (float64, bool) {
	t, c := f.p.Times, f.p.Celsius
	n := len(c)
	quarters, q, dir, ok := f.quarterLines(level)
	if !ok {
		return 0, false
	}
	last := quarters[3]
	var hi, lo [4]float64 // each quarter's speed toward level, high and low
	z := speedQuantile(q - 2)
	for k, l := range quarters {
		a, b := n-(4-k)*q, n-(3-k)*q
		m := z * Inflation(l.rho(t[a:b], c[a:b]), maxSpeedInflation) * l.se
		hi[k], lo[k] = dir*l.slope+m, dir*l.slope-m
	}
	if lo[2] <= 0 || lo[3] <= 0 {
		return 0, false
	}
	centre := func(k int) float64 { return (t[n-(4-k)*q] + t[n-(3-k)*q-1]) / 2 }
	s := max(0, math.Log(hi[3]/lo[2])/(centre(3)-centre(2)))
	v := max(hi[1], hi[2], hi[3]) * math.Exp(s*(t[n-1]-centre(3)))
	way := dir * (level - last.end)
	if s*way/v < 1e-9 {
		return t[n-1] + way/v, true
	}
	return t[n-1] + math.Log1p(s*way/v)/s, true
}

// peakBound is the open-ended forecast "not before" of a fixed, non-handling target
// ahead of readings that move toward it (peakFloor), for readings whose direction
// against the settling temperature is not known (no measured ambient; near the room or
// still at their extreme) and which slow too little for speedFloor. No central estimate and no late end: the settling temperature of a
// powered part or an unmeasured oven is not known, and a chain of lags slows later
// than its present curvature says (its speed's decay rate rises toward the slowest
// stage's), so no late end follows from the readings. out unchanged (insufficient)
// when no bound applies or the bound is the last reading itself.
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
	if !ok || !f.trendReaches(out.Celsius) || lo <= f.p.Times[n-1] {
		return out
	}
	out.State = StatePredicted
	out.Earliest = f.abs(lo).Add(out.Target.Hold)
	f.note(fmt.Sprintf("%.1f °C: not before %s into the segment, no late end and no central estimate: the readings head toward it, and a body heated or cooled through a chain of lags (heater, sink, sensor) after a step speeds up ever more slowly and then only slows, so it cannot cover the way left faster than its recent speed, rising at most as it last rose, takes it there.", out.Celsius, seconds(lo).Round(time.Second)))
	return out
}
