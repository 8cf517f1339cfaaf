package predict

import (
	"math"
	"sort"
)

// deadTimeCurve is a first-order-plus-dead-time step response: base until dead, then
// base + gain·(1 − e^(−(t−dead)/tau)); tau = +Inf is its limit with no resolvable
// curvature, the ramp base + gain·(t − dead) (gain then in °C/s).
type deadTimeCurve struct{ base, gain, dead, tau float64 }

// deadTimeFits are fitDeadTime's results: the best curve and the best ramp.
type deadTimeFits struct{ best, ramp deadTimeCurve }

// Grids of fitDeadTime: dead times over the readings' span, and time constants on a
// logarithmic grid from a fiftieth of the span (deadTimeTauStep decades apart).
const (
	deadTimeDeads   = 40
	deadTimeTaus    = 86
	deadTimeTauStep = 0.07
	// maxDeadTimePoints caps the readings fitDeadTime uses: more are taken evenly
	// strided (a logger read every second gives thousands in an hour).
	maxDeadTimePoints = 1000
)

// fitDeadTime fits a deadTimeCurve to readings c at times t by least squares: for each
// dead time on a grid of deadTimeDeads over the readings' span and each time constant
// on a logarithmic grid from a fiftieth of the span to 10⁴ spans, and the ramp, base
// and gain are linear. With the readings after the dead time a suffix of them and
// 1 − e^(−(t−dead)/τ) = 1 − e^(dead/τ)·e^(−t/τ), every sum the least squares needs is a
// suffix sum of e^(−t/τ), its square and its product with the readings (of t, t² and
// t·c for the ramp), so each time constant costs one pass over the readings. ok is
// false with fewer than 10 readings or no span.
func fitDeadTime(t, c []float64) (best, ramp deadTimeCurve, ok bool) {
	if stride := (len(t) + maxDeadTimePoints - 1) / maxDeadTimePoints; stride > 1 {
		var ts, cs []float64
		for i := 0; i < len(t); i += stride {
			ts, cs = append(ts, t[i]), append(cs, c[i])
		}
		t, c = ts, cs
	}
	n := len(t)
	if n < 10 || t[n-1] <= t[0] {
		return deadTimeCurve{}, deadTimeCurve{}, false
	}
	t0, span := t[0], t[n-1]-t[0]
	var mc float64
	for _, v := range c {
		mc += v
	}
	mc /= float64(n)
	var syy float64
	y := make([]float64, n) // the readings about their mean
	u := make([]float64, n) // the times from the first reading
	for i := range c {
		y[i], u[i] = c[i]-mc, t[i]-t0
		syy += y[i] * y[i]
	}
	sufY := make([]float64, n+1)
	for k := n - 1; k >= 0; k-- {
		sufY[k] = sufY[k+1] + y[k]
	}
	// from[i]: the first reading after the i-th dead time.
	var from [deadTimeDeads]int
	for i := range from {
		dead := span * float64(i) / deadTimeDeads
		from[i] = sort.SearchFloat64s(u, math.Nextafter(dead, math.Inf(1)))
	}
	bestSSE := math.Inf(1)
	rampSSE := math.Inf(1)
	try := func(d deadTimeCurve, sx, sxx, sxy float64) {
		den := sxx - sx*sx/float64(n) // the shape's sum of squares about its mean
		if !(den > 1e-12*sxx) {
			return
		}
		d.gain = sxy / den
		sse := syy - d.gain*d.gain*den
		d.base = mc - d.gain*sx/float64(n)
		if math.IsInf(d.tau, 1) && sse < rampSSE {
			ramp, rampSSE = d, sse
		}
		if sse < bestSSE {
			best, bestSSE = d, sse
		}
	}
	e, se, see, sey := make([]float64, n), make([]float64, n+1), make([]float64, n+1), make([]float64, n+1)
	for j := 0; j <= deadTimeTaus; j++ {
		ramp := j == deadTimeTaus
		tau := span / 50 * math.Pow(10, float64(j)*deadTimeTauStep)
		for k := n - 1; k >= 0; k-- { // suffix sums
			if ramp {
				e[k] = u[k]
			} else {
				e[k] = math.Exp(-u[k] / tau)
			}
			se[k], see[k], sey[k] = se[k+1]+e[k], see[k+1]+e[k]*e[k], sey[k+1]+e[k]*y[k]
		}
		for i, k := range from {
			dead := span * float64(i) / deadTimeDeads
			cnt := float64(n - k)
			if cnt < 2 {
				continue
			}
			if ramp { // x = u − dead
				sx := se[k] - cnt*dead
				try(deadTimeCurve{dead: t0 + dead, tau: math.Inf(1)}, sx, see[k]-2*dead*se[k]+cnt*dead*dead, sey[k]-dead*sufY[k])
				continue
			}
			a := math.Exp(dead / tau) // x = 1 − a·e
			try(deadTimeCurve{dead: t0 + dead, tau: tau}, cnt-a*se[k], cnt-2*a*se[k]+a*a*see[k], sufY[k]-a*sey[k])
		}
	}
	return best, ramp, !math.IsInf(bestSSE, 1)
}

// shape is the curve's unit response at time s: 0 before the dead time, then
// 1 − e^(−(s−dead)/tau) (s − dead for the ramp).
func (d deadTimeCurve) shape(s float64) float64 {
	u := s - d.dead
	switch {
	case u <= 0:
		return 0
	case math.IsInf(d.tau, 1):
		return u
	}
	return -math.Expm1(-u / d.tau)
}

// crossing is when the curve reaches level, s; ok is false when it never does after
// the dead time.
func (d deadTimeCurve) crossing(level float64) (float64, bool) {
	if d.gain == 0 {
		return 0, false
	}
	r := (level - d.base) / d.gain
	if r <= 0 {
		return 0, false
	}
	if math.IsInf(d.tau, 1) {
		return d.dead + r, true
	}
	if r >= 1 {
		return 0, false
	}
	return d.dead - d.tau*math.Log1p(-r), true
}

// deadTimeCrossing is when the readings' first-order-plus-dead-time fit (f.deadTime)
// reaches level, s from the segment start: peakBound's central estimate beside its
// "not before". Where the best fit settles short of level, the best ramp's crossing
// instead (ramp true): peakBound asks for one only where the readings' own trend still
// reaches level (trendReachesIn, over the windows of its bound), so a level short of it
// is one the readings have not bent toward, and the family's member with no level, the
// straight stretch after the lag carried on, is the fit the readings still allow. ok
// is false without a fit or a crossing after the last reading.
func (f *forecaster) deadTimeCrossing(level float64) (at float64, ramp, ok bool) {
	if f.deadTime == nil {
		return 0, false, false
	}
	fits, ok := f.deadTime()
	if !ok {
		return 0, false, false
	}
	at, ok = fits.best.crossing(level)
	if !ok && !math.IsInf(fits.best.tau, 1) {
		at, ok = fits.ramp.crossing(level)
		ramp = true
	}
	return at, ramp, ok && at > f.p.Times[len(f.p.Times)-1]
}
