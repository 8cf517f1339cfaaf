package predict

import (
	"fmt"
	"math"
	"slices"
	"sync"
	"time"

	"gonum.org/v1/gonum/stat/distuv"
)

// IntervalSettings tunes the forecast intervals. The zero value is ready to use; each
// field documents its default.
type IntervalSettings struct {
	// Z is the standard-normal quantile of the two-sided interval. Zero means 1.645,
	// a 90 % interval; Analyze takes it from Student's t with the fit's residual
	// degrees of freedom instead (wider for a sparse record).
	Z float64
	// MaxInflation caps the widening for autocorrelated residuals. Zero means 5.
	MaxInflation float64
	// ModelError is the standard deviation of the model-form error of a crossing
	// time, as a fraction of the horizon h (time from the last reading to the
	// crossing) at h equal to the data's span, growing as sqrt(h/span) beyond it:
	// sd = ModelError·h·sqrt(h/span). No parameter covariance sees this error (the
	// true curve is not exactly any model's); zero means 0.14, calibrated on the
	// generated benchmark in testdata/bench so that 90 % intervals cover about 90 %
	// (see TestAccuracyTable). Analyze sizes a zero ModelError from the segment's own
	// backtest instead (backtestModelError), pooled with 0.14. Negative means none.
	ModelError float64
	// AmbientOffset is the standard deviation, °C, of the offset between a measured
	// ambient (or a chamber's set temperature standing for it) and where the
	// specimen's own sensor settles: a level error of the settling temperature, turned
	// into time through the slope at the crossing like the misfit. Zero means
	// ambientOffsetSD; negative means none. A fitted ambient carries its own
	// uncertainty instead.
	AmbientOffset float64
	// bound is the model-form coefficient for the ends that must never err on the
	// unsafe side: a handling target's interval and every open-ended "not before"
	// bound (predictedFrom, profileBound). Zero means ModelError. Analyze sets it to
	// the backtest's gross coefficient, whose misses still hold the refitted heads'
	// parameter error (backtestModelError).
	bound float64
	// ambientForm is the model-form standard deviation of a fitted settling
	// temperature (K), beyond its covariance: Analyze sets it from the backtest
	// (backtestTerms), zero means none.
	ambientForm float64
}

func (s IntervalSettings) withDefaults() IntervalSettings {
	if s.Z == 0 {
		s.Z = 1.645
	}
	if s.MaxInflation == 0 {
		s.MaxInflation = 5
	}
	if s.ModelError == 0 {
		s.ModelError = 0.14
	}
	if s.AmbientOffset == 0 {
		s.AmbientOffset = ambientOffsetSD
	}
	if s.bound == 0 {
		s.bound = s.ModelError
	}
	return s
}

// ambientOffsetSD is the default AmbientOffset, °C. A measured ambient is another
// sensor's reading: where the specimen settles, its own sensor reads the room through
// its own error and the room's sensor through another, so the models' settling
// temperature is off by their difference, and by whatever the specimen sees that the
// room's sensor does not (walls warmer or cooler than the air, heat of its own). Two
// sensors compared side by side in the same air before use agree to about 0.1 K, the
// comparison's own uncertainty at a logger's 0.1 °C resolution (common practice where
// a lab logs a room channel; no source); an unchecked pair can differ by more: IEC
// 60584-1 allows a class 1 type T thermocouple ±0.5 K near room temperature (from
// memory), σ ≈ 0.29 K for a rectangular spread over it (JCGM 100:2008, 4.3.7, from
// memory). It matters only near the ambient: 0.1 K is τ·0.1/0.5 of a crossing 0.5 K
// from the ambient, under 0.4 % of τ for one 28 K away.
//
// Measured (issue 12). The benchmark's measured ambients have no offset (benchgen reads
// the air itself), so there it only widens: the described median width at 25 % elapsed
// 0.300 → 0.304 (TestAccuracyTable; 0.32 at 0.29 K, past its floor of 0.31; 0.319 at
// 0.14 K), the warming specimens' (targets 1 K from the room) 0.41 / 0.23 → 0.44 / 0.32 at
// 25 / 50 %; the dense set's described width 0.24 / 0.13 → 0.26 / 0.15; no median or
// coverage moves in either. On the cell rests (TestAccuracyReal), whose cell settles
// 0.1–0.45 K above the chamber's reading, coverage at 25 / 50 % went 88 / 71 → 92 / 92 %
// and width 1.28 / 0.34 → 1.34 / 1.05 (0.05 K: 92 / 79 %; 0.29 K: 100 / 100 %, width
// 2.2); over all real families at 50 % 83 → 92 %.
//
// A chamber's set point standing for its air (no room channel) is a weaker stand-in:
// the control's own offset and swing add to the sensors' (a chamber's air often sits a
// few tenths of a kelvin from its set point; common practice, no source). That is not
// counted yet; the 0.1 K is a floor there.
const ambientOffsetSD = 0.1

// Inflation returns the factor sqrt((1+ρ)/(1−ρ)) by which a standard error computed
// as if residuals were independent understates it when they follow an AR(1) process
// with lag-1 autocorrelation ρ (the variance inflation of a mean of AR(1) data; common
// practice). Negative ρ counts as 0; the factor is capped at limit.
func Inflation(rho, limit float64) float64 {
	rho = max(rho, 0)
	if rho >= 1 {
		return limit
	}
	return min(math.Sqrt((1+rho)/(1-rho)), limit)
}

// ForecastLumped forecasts each target from a lumped fit (fit may be nil or failed) of
// the segment data p that started at start. It returns one TargetForecast per target,
// in order:
//
//   - reached: the data since the segment start already cross the target (At is the
//     first reading across it; with a Hold, the entry into the final run of readings
//     across it plus the Hold);
//   - holding: across a target with a Hold whose time has not yet passed;
//   - unreachable: the target lies on the far side of the ambient, or is a Within band
//     of zero width; but insufficient instead when the ambient's own uncertainty
//     spans the target, the residuals are structured, or (ambient fitted) the
//     readings have covered less than 75 % of their decay;
//   - insufficient: no usable fit;
//   - predicted: crossing of the fitted curve, τ·ln(θi/(T − Tamb)), with a delta-method
//     interval from the fit's covariance, widened by Inflation(fit.Rho), by the fit's
//     Misfit (as a level error turned into time through the slope) and by the
//     model-form term of IntervalSettings.ModelError, and never starting before the
//     last reading. With a fitted ambient, a target some plausible settling
//     temperatures never reach gets an open-ended interval instead (Latest zero;
//     At zero too when the fit itself does not reach it): see notBefore.
//
// The ambient is assumed to stay at fit.Ambient from the last reading on.
func ForecastLumped(fit *LumpedResult, p *LumpedProblem, start time.Time, targets []Target, s *IntervalSettings) []TargetForecast {
	var m fitted
	if fit != nil && fit.Status == FitSuccess {
		m = lumpedFitted{fit}
	}
	var is IntervalSettings
	if s != nil {
		is = *s
	}
	f := newForecaster(m, p, start, is.withDefaults())
	if m != nil {
		// The caller's own fit of a curve it knows: its direction stands.
		f.fit, f.ambient, f.side = m, m.ambient(), m.side()
	}
	out := make([]TargetForecast, len(targets))
	for i, tg := range targets {
		out[i] = f.target(tg)
	}
	return out
}

// forecastTargets forecasts each target from a fitted model (nil when there is none).
// It also returns notes explaining states the readings or the fit held back (each
// note once).
func forecastTargets(m fitted, p *LumpedProblem, start time.Time, targets []Target, s *IntervalSettings) ([]TargetForecast, []string) {
	var is IntervalSettings
	if s != nil {
		is = *s
	}
	f := newForecaster(m, p, start, is.withDefaults())
	out := make([]TargetForecast, len(targets))
	for i, tg := range targets {
		out[i] = f.target(tg)
	}
	return out, f.notes
}

// fitted is what the forecaster needs of a successful fit.
type fitted interface {
	// ambient is the settling temperature, °C; side is +1 cooling, −1 heating.
	ambient() float64
	side() float64
	// crossing returns the time the curve reaches level (°C), the gradient-based
	// variance of that time from the parameter covariance (a Within level moves with
	// the ambient), and the curve's rate |dT/dt| there; ok is false when the curve
	// never reaches it.
	crossing(level float64, within bool) (t, variance, rate float64, ok bool)
	// residuals returns the lag-1 autocorrelation and the misfit of the residuals.
	residuals() (rho, misfit float64)
	// value evaluates the fitted curve at t seconds from the segment start.
	value(t float64) float64
	// ambientErr is the settling temperature's standard error (0 when measured).
	ambientErr() float64
	// rmse is the root-mean-square residual, °C.
	rmse() float64
}

// lumpedFitted adapts a successful LumpedResult.
type lumpedFitted struct{ r *LumpedResult }

func (l lumpedFitted) ambient() float64                 { return l.r.Ambient }
func (l lumpedFitted) side() float64                    { return sign(l.r.Excess) }
func (l lumpedFitted) residuals() (rho, misfit float64) { return l.r.Rho, l.r.Misfit }
func (l lumpedFitted) value(t float64) float64          { return l.r.Value(t) }

func (l lumpedFitted) crossing(level float64, within bool) (t, variance, rate float64, ok bool) {
	fit := l.r
	excess := level - fit.Ambient
	if sign(excess) != sign(fit.Excess) {
		return 0, 0, 0, false
	}
	tStar := fit.Tau * math.Log(fit.Excess/excess)
	// Gradient of t* = τ·ln(θi/(L − Tamb)) in (Tamb, θi, τ); a Within level moves with
	// the ambient, so its ambient derivative is zero.
	g := [3]float64{fit.Tau / excess, fit.Tau / fit.Excess, tStar / fit.Tau}
	if within {
		g[0] = 0
	}
	for a := range 3 {
		for b := range 3 {
			variance += g[a] * fit.Cov.At(a, b) * g[b]
		}
	}
	return tStar, variance, math.Abs(excess) / fit.Tau, true
}

// forecaster holds what the per-target forecasts share.
type forecaster struct {
	fit      fitted // nil unless the fit succeeded
	mismatch bool   // the fit's residuals are structured (see mismatched)
	p        *LumpedProblem
	start    time.Time
	side     float64 // +1 settling downward (cooling), −1 upward (heating), 0 unknown
	ambient  float64 // the settling temperature, NaN when unknown
	s        IntervalSettings
	tol      float64  // readings within tol of a level count as at it (noise), °C
	spacing  float64  // the median spacing of the readings, s
	notes    []string // why states were held back, each once
	away     float64  // still at its extreme: +1 rising away from the room, −1 falling, 0 neither
	// deadTime is fitDeadTime of the readings, fitted once on first use (peakBound).
	deadTime func() (deadTimeFits, bool)
}

func newForecaster(fit fitted, p *LumpedProblem, start time.Time, s IntervalSettings) *forecaster {
	f := &forecaster{p: p, start: start, s: s, ambient: math.NaN()}
	f.deadTime = sync.OnceValues(func() (deadTimeFits, bool) {
		best, ramp, ok := fitDeadTime(p.Times, p.Celsius)
		return deadTimeFits{best, ramp}, ok
	})
	n := len(p.Celsius)
	f.tol, f.spacing = readingTolerance(p.Celsius), medianSpacing(p.Times)
	if n == 0 {
		return f
	}
	m := p.Celsius // too few readings for a running median to mean anything
	if n >= 2*medianWindow {
		m = runningMedian(p.Celsius)
	}
	phys, sure := extremeSide(m, p.Ambient)
	if fit != nil && sure && fit.side() != phys {
		f.note("The fitted curve runs the wrong way for where the specimen started against the room (a fit toward an implausible settling temperature): no forecast from it.")
		fit = nil
	}
	switch {
	case !sure && p.Ambient == nil:
		// Near the room with no measured ambient, a specimen cooling toward the room
		// and one warming toward it from below read alike (a room 2 °C warmer than
		// assumed turns one into the other): no direction, so no state.
		f.note(directionUnknown(m))
		f.fit = fit // kept for the curve; the targets stay insufficient
		f.away = awayFromRoom(m)
	case fit != nil:
		f.fit, f.ambient, f.side = fit, fit.ambient(), fit.side()
		_, misfit := fit.residuals()
		f.mismatch = misfit > 0.2 && misfit > 2*math.Sqrt(max(fit.rmse()*fit.rmse()-misfit*misfit, 0))
		if !sure && trendSide(m) != f.side && n >= 2*medianWindow {
			// Near the measured room and a reversal at the end: the fit and the
			// latest trend disagree, so the direction is not known.
			f.side = 0
			f.note("The readings lie close to the room and their latest trend runs against the fitted curve, so settle cannot tell whether the specimen is cooling or warming yet.")
		}
	case p.Ambient != nil:
		f.ambient = p.Ambient[n-1]
		f.side = sign(p.Celsius[n-1] - f.ambient)
		if sure {
			f.side = phys
		}
	case sure:
		f.side = phys
	case n > 1:
		f.side = trendSide(m)
	}
	return f
}

// directionUnknown says why the direction of readings m is not known with no measured
// ambient: they lie near the assumed room, or they are still at their extreme (rising
// in an oven whose air is not measured looks like a thermocouple catching up with a hot
// specimen until the readings turn).
func directionUnknown(m []float64) string {
	const measure = "measure the ambient on a channel of its own (role: ambient)"
	if up, down := slices.Max(m)-roomPrior, roomPrior-slices.Min(m); max(up, down) >= priorFar {
		return fmt.Sprintf("The readings are still at their extreme, %.0f °C from the assumed room of %.0f °C, so settle cannot tell a specimen settling toward an unmeasured oven or chamber from one whose thermocouple is still catching up with it, and forecasts no interval from the readings alone until they have bent toward a level they resolve (at most \"not before\" for a target ahead of them, with a rough central estimate beside it after a step, never for a handling target); for an oven give the specimen convection: chamber with chamber_c (its set point), or %s.", max(up, down), roomPrior, measure)
	}
	return "The readings lie within a few degrees of an unmeasured room, so settle cannot tell whether the specimen is cooling or warming and forecasts no interval (at most \"not before\" for a target ahead of readings still moving toward it, with a rough central estimate beside it after a step, never for a handling target); " + measure + "."
}

// note adds a note once.
func (f *forecaster) note(s string) {
	if !slices.Contains(f.notes, s) {
		f.notes = append(f.notes, s)
	}
}

// minTolerance is the least tolerance, °C, within which a reading counts as at a level.
const minTolerance = 0.1

// readingTolerance is how close to a level, °C, a reading counts as at it: three times
// the noise of the readings (robust, from second differences), at least minTolerance.
func readingTolerance(c []float64) float64 {
	if len(c) < 3 {
		return minTolerance
	}
	d2 := make([]float64, 0, len(c)-2)
	for i := 1; i < len(c)-1; i++ {
		d2 = append(d2, math.Abs(c[i+1]-2*c[i]+c[i-1]))
	}
	sigma := median(d2) / (0.6745 * math.Sqrt(6))
	return max(3*sigma, minTolerance)
}

// medianSpacing is the median time between consecutive readings, s (0 for fewer than
// two readings).
func medianSpacing(t []float64) float64 {
	if len(t) < 2 {
		return 0
	}
	d := make([]float64, len(t)-1)
	for i := range d {
		d[i] = t[i+1] - t[i]
	}
	return median(d)
}

func sign(x float64) float64 {
	switch {
	case x > 0:
		return 1
	case x < 0:
		return -1
	}
	return 0
}

// target forecasts one target.
func (f *forecaster) target(tg Target) TargetForecast {
	out := TargetForecast{Target: tg, Celsius: tg.Celsius, State: StateInsufficient}
	if tg.IsWithin() {
		if tg.Within <= 0 {
			out.State = StateUnreachable
			return out
		}
		out.Celsius = f.ambient + f.side*tg.Within
	}
	if f.side == 0 || math.IsNaN(out.Celsius) {
		out.Celsius = tg.Celsius
		if f.away != 0 && !tg.IsWithin() && !tg.Handling {
			if sb := f.speedBound(out); sb.State == StatePredicted {
				return sb
			}
		}
		return f.peakBound(out) // the readings' own speed after a step (peakspeed.go)
	}
	if tg.Handling && f.side < 0 {
		f.note("The specimen is warming: a handling target is judged only while a specimen cools, so it is not forecast.")
		return out
	}
	entry, seen := f.entry(tg, out.Celsius)
	if hf, ok := f.fit.(handlingFitted); ok && tg.Handling {
		if t, v, rate, reach, used := hf.handlingCrossing(out.Celsius); used {
			return f.core(out, seen, t, v, rate, reach)
		}
	}
	switch seen {
	case crossed:
		return f.observed(out, entry)
	case neverAway:
		f.note(fmt.Sprintf("The readings have been at or past %.1f °C since the segment began: settle never saw the specimen on the other side, so it does not call that target reached (a thermocouple off its specimen reads the room).", out.Celsius))
		return out
	}
	if f.fit == nil {
		return f.notBefore(out, 0, true)
	}
	return f.predicted(out)
}

// crossSeen is what the readings say about a target's level.
type crossSeen int

const (
	// notAcross: the latest readings are not across the level.
	notAcross crossSeen = iota
	// crossed: the latest readings are across, and earlier ones were clearly not.
	crossed
	// neverAway: the latest readings are across, but no reading of the segment was
	// clearly on the other side.
	neverAway
)

// recentReadings is how many of the latest readings' median decides which side of a
// level the specimen is on now.
const recentReadings = 3

// entry judges the target's level on the readings alone. A reading is across when it
// is on the target's side of the level (at or below it, cooling), away when it is on
// the other side by more than the noise tolerance. The target is crossed when the
// median of the last recentReadings readings is across and some earlier reading was
// away; entry is then the first reading across after the last one away (the entry
// into the final run, so a re-warm above the level and back restarts it; readings
// within the tolerance do not break the run).
func (f *forecaster) entry(tg Target, level float64) (int, crossSeen) {
	c := f.p.Celsius
	n := len(c)
	excess := func(i int) float64 { // > 0: on the far side of the level
		l := level
		if tg.IsWithin() && f.p.Ambient != nil {
			l = f.p.Ambient[i] + f.side*tg.Within
		}
		return f.side * (c[i] - l)
	}
	if n == 0 {
		return 0, notAcross
	}
	recent := make([]float64, 0, recentReadings)
	for i := max(0, n-recentReadings); i < n; i++ {
		recent = append(recent, excess(i))
	}
	slices.Sort(recent)
	if recent[len(recent)/2] > 0 {
		return 0, notAcross
	}
	i := n
	for i > 0 && excess(i-1) <= f.tol {
		i--
	}
	switch i {
	case n: // the latest reading is clearly away: a re-warm under way
		return 0, notAcross
	case 0:
		return 0, neverAway
	}
	for i < n-1 && excess(i) > 0 {
		i++
	}
	return i, crossed
}

// gapFactor: a spacing between readings more than gapFactor times the median
// spacing is a gap (an unplugged logger, a pause, a journal resume).
const gapFactor = 5

// observed fills a reached or holding forecast from the entry reading. When a gap
// precedes the entry, the crossing happened somewhere inside it: At is then the
// fitted curve's crossing within the gap (or, without one, the straight line between
// the readings on either side), marked Estimated.
func (f *forecaster) observed(out TargetForecast, entry int) TargetForecast {
	n := len(f.p.Times)
	at := f.p.Times[entry]
	if entry > 0 && f.spacing > 0 && at-f.p.Times[entry-1] > gapFactor*f.spacing {
		at, out.Estimated = f.gapCrossing(out, entry), true
	}
	end := f.abs(at).Add(out.Target.Hold)
	out.At, out.State = end, StateReached
	if end.After(f.abs(f.p.Times[n-1])) {
		out.State, out.Earliest, out.Latest = StateHolding, end, end
	}
	return out
}

// gapCrossing estimates when the level was crossed between readings entry−1 and entry.
func (f *forecaster) gapCrossing(out TargetForecast, entry int) float64 {
	t0, t1 := f.p.Times[entry-1], f.p.Times[entry]
	if f.fit != nil {
		if t, _, _, ok := f.fit.crossing(out.Celsius, out.Target.IsWithin()); ok && t > t0 && t < t1 {
			return t
		}
	}
	c0, c1 := f.p.Celsius[entry-1], f.p.Celsius[entry]
	if c0 == c1 {
		return t1
	}
	frac := math.Min(math.Max((c0-out.Celsius)/(c0-c1), 0), 1)
	return t0 + frac*(t1-t0)
}

// seenDecay is the share of its initial excess a curve with a fitted ambient must
// have lost before the fitted ambient counts as seen.
const seenDecay = 0.75

// asymptoteSeen reports whether the ambient is measured, or the readings have covered
// seenDecay of their decay toward the fitted one and have themselves slowed down
// (readingsSettled): a fit alone can put a settling temperature just past the data.
func (f *forecaster) asymptoteSeen() bool {
	if f.p.Ambient != nil {
		return true
	}
	n := len(f.p.Celsius)
	first, last := f.p.Celsius[0]-f.ambient, f.p.Celsius[n-1]-f.ambient
	rho, _ := f.fit.residuals()
	return math.Abs(last) <= (1-seenDecay)*math.Abs(first) && rho < maxSettledRho &&
		readingsSettled(f.p.Times, f.p.Celsius)
}

// trendReaches reports whether the readings themselves leave room for level: over
// their last two quarters, the approach toward level has not visibly slowed enough to
// stop short of it. With v3 and v4 the quarters' speeds toward level (least-squares
// slopes; v3 taken low and v4 high by two standard errors each) and Δ the time between
// the quarters' centres, a curve slowing as an exponential does goes on for another
// v/k past the last reading, with k = ln(v3/v4)/Δ and v the speed v4 brought forward
// to that reading; when v3 ≤ v4 the readings show no slowing at all. A door
// opening or a re-warm early in the segment can bend a fitted settling temperature and
// pass a slow curve off as settled; this looks only at the latest readings, and errs
// toward "insufficient", never toward "unreachable".
func (f *forecaster) trendReaches(level float64) bool {
	return f.trendReachesIn(4, level)
}

// trendReachesIn is trendReaches over the last two of windows windows of the readings
// (trendReaches: quarters), at least 5 readings each.
func (f *forecaster) trendReachesIn(windows int, level float64) bool {
	t, c := f.p.Times, f.p.Celsius
	n := len(c)
	q := n / windows
	if q < 5 {
		return false
	}
	b3, se3 := slope(t[n-2*q:n-q], c[n-2*q:n-q])
	b4, se4 := slope(t[n-q:], c[n-q:])
	gap := level - c[n-1]
	dir := math.Copysign(1, gap)
	v3, v4 := dir*b3-2*se3, dir*b4+2*se4
	if v4 <= 0 {
		return false // heading away from level, or flat, beyond doubt
	}
	if v3 <= v4 {
		return true // no slowing shown
	}
	centre := func(ts []float64) float64 { return (ts[0] + ts[len(ts)-1]) / 2 }
	c4 := centre(t[n-q:])
	k := math.Log(v3/v4) / (c4 - centre(t[n-2*q:n-q]))
	return math.Abs(gap) <= v4*math.Exp(-k*(t[n-1]-c4))/k // from the last reading on
}

// maxSettledRho: residuals more correlated than this (lag 1) mean the fit's settling
// temperature and its standard error are not to be trusted for "unreachable".
const maxSettledRho = 0.5

// readingsSettled reports whether the readings' own rate of change has visibly fallen:
// the least-squares slope over their last quarter, plus twice its standard error, is
// at most a quarter of the slope over their first quarter, which itself stands out
// from its noise by three standard errors (at least 5 readings a quarter). A curve
// that settles, seen without any model; an exponential does so after about 1.4 time
// constants.
func readingsSettled(t, c []float64) bool {
	n := len(c)
	q := n / 4
	if q < 5 {
		return false
	}
	first, seFirst := slope(t[:q], c[:q])
	last, seLast := slope(t[n-q:], c[n-q:])
	return math.Abs(first) > 3*seFirst && math.Abs(last)+2*seLast <= 0.25*math.Abs(first)
}

// slope is the least-squares slope of c against t and its standard error (0, +Inf
// when t does not vary).
func slope(t, c []float64) (b, se float64) {
	_, _, b, se = leastSquares(t, c)
	return b, se
}

// leastSquares is the least-squares line of c against t: the means of t and c it
// passes through, its slope and the slope's standard error (0, +Inf when t does not
// vary or there are fewer than 3 readings).
func leastSquares(t, c []float64) (mt, mc, b, se float64) {
	n := float64(len(t))
	for i := range t {
		mt += t[i]
		mc += c[i]
	}
	mt /= n
	mc /= n
	var stc, stt float64
	for i := range t {
		stc += (t[i] - mt) * (c[i] - mc)
		stt += (t[i] - mt) * (t[i] - mt)
	}
	if stt == 0 || n < 3 {
		return mt, mc, 0, math.Inf(1)
	}
	b = stc / stt
	var ss float64
	for i := range t {
		r := c[i] - mc - b*(t[i]-mt)
		ss += r * r
	}
	return mt, mc, b, math.Sqrt(ss / (n - 2) / stt)
}

// plausibleRoom reports whether the settling temperature is measured, or fitted within
// two standard deviations of the room prior.
func (f *forecaster) plausibleRoom() bool {
	return f.p.Ambient != nil || math.Abs(f.ambient-roomPrior) <= 2*roomPriorSD
}

// handlingFitted is a fit that can judge a handling target on the specimen's hottest
// point rather than at the sensor (a conduction model with a surface thermocouple).
type handlingFitted interface {
	// handlingCrossing is crossing for the hottest point; used is false when the
	// sensor is the hottest point and its own curve serves.
	handlingCrossing(level float64) (t, variance, rate float64, ok, used bool)
}

// core fills a handling target's forecast from the hottest point's fitted crossing
// (a surface thermocouple does not see the core). Reached needs both: the readings
// across the level (the core lags the surface, so it cannot be below while the surface
// is not) and the core's crossing, with its interval's late bound, before the last
// reading; At is then the fitted crossing, marked Estimated. Else as predicted.
func (f *forecaster) core(out TargetForecast, seen crossSeen, tStar, v, rate float64, ok bool) TargetForecast {
	pred := f.predictedFrom(out, tStar, v, rate, ok)
	last := f.abs(f.p.Times[len(f.p.Times)-1])
	if seen == crossed && pred.State == StatePredicted && !pred.Latest.IsZero() && !pred.Latest.After(last) {
		out.State, out.At, out.Estimated = StateReached, f.abs(tStar).Add(out.Target.Hold), true
		return out
	}
	return pred
}

// predicted fills a predicted (or unreachable) forecast.
func (f *forecaster) predicted(out TargetForecast) TargetForecast {
	tStar, v, rate, ok := f.fit.crossing(out.Celsius, out.Target.IsWithin())
	return f.predictedFrom(out, tStar, v, rate, ok)
}

// predictedFrom fills a predicted (or unreachable) forecast from a crossing.
func (f *forecaster) predictedFrom(out TargetForecast, tStar, v, rate float64, ok bool) TargetForecast {
	rho, misfit := f.fit.residuals()
	if !ok {
		// Unreachable only when the target lies beyond the settling temperature by
		// more than that temperature's own uncertainty (an early fit can put a free
		// ambient on the wrong side of a target it will in fact reach).
		out.State = StateUnreachable
		// A curve the model does not fit says little about where it settles, and nor
		// does a fitted ambient the readings have not yet bent toward.
		u := f.s.Z*f.fit.ambientErr()*Inflation(rho, f.s.MaxInflation) + misfit
		if !out.Target.IsWithin() && (math.Abs(out.Celsius-f.fit.ambient()) <= u || f.mismatch || !f.asymptoteSeen()) {
			out.State = StateInsufficient
			f.note(fmt.Sprintf("The fitted settling temperature %.1f °C lies short of %.1f °C, but the readings have not visibly settled toward it (or the model does not fit them well enough) to say the target is never reached.",
				f.fit.ambient(), out.Celsius))
		}
		if out.State == StateUnreachable && f.p.Ambient == nil && f.trendReaches(out.Celsius) {
			out.State = StateInsufficient
			f.note(fmt.Sprintf("The fitted settling temperature %.1f °C lies short of %.1f °C, but the latest readings have not slowed enough to stop short of it, so settle does not call it unreachable.",
				f.fit.ambient(), out.Celsius))
		}
		if out.State == StateUnreachable && !f.plausibleRoom() {
			out.State = StateInsufficient
			f.note(fmt.Sprintf("The fitted settling temperature %.1f °C is not a plausible room (the prior is %.0f ± %.0f °C) and no ambient is measured, so settle does not call a target beyond it unreachable; measure the ambient on a channel of its own.",
				f.ambient, roomPrior, roomPriorSD))
		}
		if out.State == StateInsufficient {
			return f.notBefore(out, u, true)
		}
		return out
	}
	sd := math.Sqrt(max(v, 0)) * Inflation(rho, f.s.MaxInflation)
	level := misfit / rate // level error through the slope
	if f.p.Ambient != nil && f.s.AmbientOffset > 0 {
		// A measured ambient's offset from where the specimen settles, the same way.
		level = math.Hypot(level, f.s.AmbientOffset/rate)
	}
	last := f.p.Times[len(f.p.Times)-1]
	// A handling target's interval keeps the gross model-form term (IntervalSettings'
	// bound): its late end plans when a part may be touched, and never comes sooner
	// for the backtest's correction.
	k := f.s.ModelError
	if out.Target.Handling {
		k = f.s.bound
	}
	form := f.form(k, tStar)
	amb := f.ambientTerm(tStar, rate)
	half := f.s.Z * math.Sqrt(sd*sd+level*level+form*form+amb*amb)
	hold := out.Target.Hold
	out.State = StatePredicted
	out.At = f.abs(max(tStar, last)).Add(hold)
	out.Earliest = f.abs(max(tStar-half, last)).Add(hold)
	out.Latest = f.abs(max(tStar+half, last)).Add(hold)
	if u := f.s.Z*f.fit.ambientErr()*Inflation(rho, f.s.MaxInflation) + misfit; f.profiled(out) && math.Abs(out.Celsius-f.fit.ambient()) <= u {
		// A "not before" must never be late: its early end takes the gross term, and
		// the settling temperature's model-form term as the closed interval does
		// (both can only make it sooner).
		gross := f.form(f.s.bound, tStar)
		out.Earliest = f.abs(max(tStar-f.s.Z*math.Sqrt(sd*sd+level*level+gross*gross+amb*amb), last)).Add(hold)
		// The early end is the sooner of the closed interval's and the profile's
		// (notBefore), unless the closed one's is the last reading itself: "not
		// before now" says nothing, and the profile's bound, taken over the settling
		// temperatures the readings allow, stands on its own (the late end, which
		// Due plans a handling target with, stays open either way). The profile
		// reaches to the room prior's far end (untrusted), as for every target a fit
		// leaves open: a settling temperature whose own uncertainty holds the target
		// is no firmer as an end than the fit is a model of the curve. Held only u
		// beyond the fitted one, the bound came late in the dense benchmark (go test
		// ./predict -run TestAccuracyDense -v): run50, a sphere warming from
		// −7 °C in a 23 °C room, described, at 50 % elapsed, fitted to settle at
		// 22.08 ± 0.02 °C with the 22 °C target inside u = 0.10 K, got "not before
		// 10,364 s" for a crossing at 10,155 s; now not before 6,879 s (speedFloor).
		nb := f.notBefore(out, u, true)
		vacuous := !out.Earliest.After(f.abs(last).Add(hold))
		if nb.State == StatePredicted && (nb.Earliest.Before(out.Earliest) || vacuous) {
			out.Earliest = nb.Earliest
		}
		// The readings' own speed may bound the crossing later still (speedFloor); a
		// central estimate before that bound is no estimate at all.
		if s, steady := f.speedFloor(out.Celsius); steady {
			if e := f.abs(s).Add(hold); e.After(out.Earliest) {
				out.Earliest = e
			}
			if out.At.Before(out.Earliest) {
				out.At = out.Earliest
			}
		}
		// So may their speed while it still rises (peakFloor: a sensor catching up
		// after a step, a powered part switched down while it still warmed), where
		// speedFloor, which needs steady slowing, says nothing; never for a handling
		// target (it changes only a fixed target's "not before").
		if s, ok := f.peakFloor(out.Celsius); ok && !out.Target.Handling {
			if e := f.abs(s).Add(hold); e.After(out.Earliest) {
				out.Earliest = e
			}
			if out.At.Before(out.Earliest) {
				out.At = out.Earliest
			}
		}
		out.Latest = time.Time{}
		f.note(fmt.Sprintf("%.1f °C lies within the uncertainty of the fitted settling temperature %.1f ± %.1f °C: some settling temperatures the readings allow never reach it, so its interval has no late end.",
			out.Celsius, f.fit.ambient(), u))
	}
	return out
}

// notBefore is the open-ended forecast of a target that some settling temperatures the
// readings allow never reach: "not before" the earliest crossing over the plausible
// ones, with no late end and no central estimate (out's At is kept when set). The
// settling temperatures the readings allow reach from the fitted one to u beyond it
// toward the target (u: its interval, widened for correlated residuals, plus the
// misfit) and, when untrusted, on to the room prior's far end roomPrior ∓
// 2·roomPriorSD. predictedFrom passes untrusted for every target its fit left
// insufficient or open-ended: the fitted one is not credibly the end (a mismatched
// model, readings not yet bent toward it, not a plausible room) or the target lies
// within its uncertainty — in the last case the room's far end only loosens the bound
// (earlier), the safe side. The earliest crossing is
// that of the lumped exponential refitted with its settling temperature held at the
// far end (a profile over the settling temperature: the farther a settling
// temperature lies beyond the target, the sooner the curve through the readings
// crosses it), less its own interval's half-width (profileBound). The exponential is the faster of
// the lumped models in the tail (a surface coefficient that falls with the
// temperature difference only slows the late cooling), so the bound errs early, the
// safe side for a handling target. It applies to a fitted settling temperature of a
// lumped or h(T) fit only: a measured ambient has no such range, and a conduction
// fit judges a handling target at the core. With no usable fit (f.fit nil: no model
// resolves the readings yet, but their direction is known), the far end is the room
// prior's. When the readings head toward the target and slow steadily, the bound is
// raised to the soonest they can get there at their present speed (speedFloor: a body
// settling toward a fixed temperature only slows), the later of two lower bounds.
// Insufficient (out unchanged) when even the far end does not reach the target, the
// refit fails (fewer than LumpedSettings' MinPoints readings), or the bound would be
// the last reading itself with no central estimate beside it ("not before now" says
// nothing).
func (f *forecaster) notBefore(out TargetForecast, u float64, untrusted bool) TargetForecast {
	if !f.profiled(out) {
		return out
	}
	room := roomPrior - f.side*2*roomPriorSD
	far := room
	if f.fit != nil {
		far = f.fit.ambient() - f.side*u
	}
	if untrusted && f.side*(far-room) > 0 {
		far = room
	}
	if f.side*(out.Celsius-far) <= 0 {
		return out
	}
	lo, ok := f.profileBound(out.Celsius, far)
	if s, steady := f.speedFloor(out.Celsius); ok && steady {
		lo = max(lo, s)
	}
	last := f.p.Times[len(f.p.Times)-1]
	if !ok || math.IsNaN(lo) || lo <= last && out.At.IsZero() {
		return out // no bound, or "not before now" with no central estimate: says nothing
	}
	lo = max(lo, last)
	out.State = StatePredicted
	out.Earliest = f.abs(lo).Add(out.Target.Hold)
	out.Latest = time.Time{}
	if untrusted && out.At.IsZero() { // beside a central estimate the caller explains
		f.noteNotBefore(out.Celsius, lo, far)
	}
	return out
}

// profileMinPoints is the fewest readings profileBound refits: the fewest any lumped
// fit accepts with its settling temperature held (two parameters and two residual
// degrees of freedom; LumpedSettings.MinPoints), not the 8 of a free fit. The bound
// needs the readings' own level and speed, not a settled noise estimate: its
// half-width takes Student's t on the refit's residual degrees of freedom (2.9 at two,
// 2.0 at five) where the forecast's own quantile is narrower (profileBound), and the
// exponential toward the far settling temperature is
// the fastest of the curves the readings allow, so a sparse record gets an earlier
// bound, never a later one. Measured (issue 12): on the real curves (TestAccuracyReal)
// the mugs' first 4–7 readings (a reading every minute or four) now get a "not before"
// where they had "not before now" or nothing — coverage over all families at 10 / 25 %
// elapsed 54 / 82 → 58 / 86 %, the mugs 50 / 75 → 83 / 88 %, the oil-film mugs at 25 %
// 67 → 83 % — none after the truth; the benchmark and its dense set (TestAccuracyTable,
// TestAccuracyDense, every case read far more often) do not move. With the forecast's
// quantile alone (1.645 where no model fits), the oil-film mugs' 4–5 readings at 10 %
// got bounds too (0 → 75 %), none late, but on a normal quantile for two degrees of
// freedom.
const profileMinPoints = 4

// profileBound returns the crossing of level by the lumped exponential fitted with its
// settling temperature held at far, less its interval's half-width (the parameter
// covariance widened for correlated residuals, the misfit through the slope and the
// model-form term, as predictedFrom sizes it, at the gross coefficient); ok is false when the fit fails, runs
// the other way or never reaches level.
func (f *forecaster) profileBound(level, far float64) (lo float64, ok bool) {
	amb := make([]float64, len(f.p.Times))
	for i := range amb {
		amb[i] = far
	}
	r, err := FitLumped(LumpedProblem{Times: f.p.Times, Celsius: f.p.Celsius, Ambient: amb}, &LumpedSettings{MinPoints: profileMinPoints})
	if err != nil {
		return 0, false
	}
	g := lumpedFitted{&r}
	tStar, v, rate, ok := g.crossing(level, false)
	if !ok || g.side() != f.side {
		return 0, false
	}
	rho, misfit := g.residuals()
	sd := math.Sqrt(max(v, 0)) * Inflation(rho, f.s.MaxInflation)
	form := f.form(f.s.bound, tStar)
	// Student's t on the refit's own degrees of freedom where that is wider than the
	// forecast's (a sparse record with no fit of its own: profileMinPoints).
	z := max(f.s.Z, studentQuantile(r.N-r.Free))
	return tStar - z*math.Sqrt(sd*sd+(misfit/rate)*(misfit/rate)+form*form), true
}

// ambientTerm is the crossing time's standard deviation from the fitted settling
// temperature's model-form error (IntervalSettings' ambientForm, zero with a measured
// ambient): for the exponential t* = τ·ln((T_last − T∞)/(T − T∞)) the derivative by T∞
// is τ/(T − T∞) − τ/(T_last − T∞) = 1/r − 1/r_last, the reciprocal slopes at the
// crossing (rate) and at the last reading, so a target near the settling temperature,
// where the curve is slow, takes most of it.
func (f *forecaster) ambientTerm(tStar, rate float64) float64 {
	last := f.p.Times[len(f.p.Times)-1]
	if !(f.s.ambientForm > 0) || f.p.Ambient != nil || tStar <= last || !(rate > 0) {
		return 0
	}
	rl := math.Abs(f.fit.value(last+1)-f.fit.value(last-1)) / 2
	if !(rl > 0) {
		return 0
	}
	return f.s.ambientForm * max(1/rate-1/rl, 0)
}

// form is the model-form standard deviation k·h·sqrt(h/span) of a crossing at tStar,
// h after the last reading, span the readings' (zero for a crossing not after the last
// reading or a k that is not positive).
func (f *forecaster) form(k, tStar float64) float64 {
	last := f.p.Times[len(f.p.Times)-1]
	span := last - f.p.Times[0]
	if !(k > 0) || !(span > 0) || tStar <= last {
		return 0
	}
	h := tStar - last
	return k * h * math.Sqrt(h/span)
}

// noteNotBefore explains an open-ended forecast of level from lo (s into the segment)
// with the settling temperature held at far.
func (f *forecaster) noteNotBefore(level, lo, far float64) {
	head := fmt.Sprintf("%.1f °C: not before %s into the segment, no late end and no central estimate yet.", level, seconds(lo).Round(time.Second))
	if f.fit == nil {
		f.note(fmt.Sprintf("%s No model resolves the readings yet; held at a settling temperature of %.1f °C (with no ambient measured, the room prior's %.0f ± 2×%.0f °C at its far end), the exponential through them crosses it no sooner.",
			head, far, roomPrior, roomPriorSD))
		return
	}
	f.note(fmt.Sprintf("%s The fitted settling temperature %.1f °C lies short of it but is not credibly where the readings end (see above); the readings allow settling temperatures as far as %.1f °C (with no ambient measured, as far as the room prior's %.0f ± 2×%.0f °C reaches), and none of them crosses it sooner.",
		head, f.fit.ambient(), far, roomPrior, roomPriorSD))
}

// profiled reports whether out's target may get an open-ended interval (notBefore):
// a fixed temperature, a fitted settling temperature, a lumped or h(T) fit.
func (f *forecaster) profiled(out TargetForecast) bool {
	_, cond := f.fit.(*condFitted)
	return f.p.Ambient == nil && !out.Target.IsWithin() && !cond
}

// maxOffset bounds forecast offsets (about 31 years) so durations cannot overflow.
const maxOffset = 1e9

// abs converts seconds from the segment start to a time.
func (f *forecaster) abs(sec float64) time.Time {
	return f.start.Add(seconds(sec))
}

// seconds converts seconds to a Duration, clamped to ±maxOffset.
func seconds(sec float64) time.Duration {
	if math.IsNaN(sec) {
		return 0
	}
	sec = math.Max(-maxOffset, math.Min(sec, maxOffset))
	return time.Duration(sec * float64(time.Second))
}

func (l lumpedFitted) ambientErr() float64 { return l.r.AmbientErr }

func (l lumpedFitted) rmse() float64 { return l.r.RMSE }

// awayFromRoom is the direction of readings m still at their far extreme from the room
// prior (no ambient measured): +1 when they rise to their maximum at the end, far above
// the room, −1 when they fall to their minimum far below it, 0 otherwise.
func awayFromRoom(m []float64) float64 {
	n := len(m)
	if n < 2 {
		return 0
	}
	up, down := slices.Max(m)-roomPrior, roomPrior-slices.Min(m)
	switch {
	case up >= priorFar && up > down && m[n-1] == slices.Max(m):
		return 1
	case down >= priorFar && down > up && m[n-1] == slices.Min(m):
		return -1
	}
	return 0
}

// speedBound is the open-ended forecast "not before" of a target ahead of readings still
// moving away from the room (f.away), with neither their direction toward a settling
// temperature nor that temperature known. A body settling toward any fixed temperature
// (a lumped body under convection and radiation from surroundings at that temperature)
// approaches it ever more slowly, so it cannot cover the way left to the target faster
// than at its present speed: the crossing comes no sooner than speedFloor says, given
// only while the readings slow steadily (an exponential slows by the same ratio per
// quarter; a door opened or a heater switched during the record breaks that, and the
// recovery after it would outrun the bound). The surroundings are assumed to stay as
// they are, as for every forecast, so the bound is given only for a target the
// readings' own trend still reaches (trendReaches): a multi-stage oven program whose
// next stage lies beyond where the readings are visibly settling would outrun it. No
// central estimate, no late end, and never for a handling target (the caller), so no
// state and no handling signal changes. TestSpeedBoundNeverLate holds a door opening,
// a ramping oven and a two-stage oven.
func (f *forecaster) speedBound(out TargetForecast) TargetForecast {
	c := f.p.Celsius
	if f.away*(out.Celsius-c[len(c)-1]) <= f.tol {
		return out
	}
	lo, ok := f.speedFloor(out.Celsius)
	if !ok || !f.trendReaches(out.Celsius) {
		return out
	}
	out.State = StatePredicted
	out.Earliest = f.abs(lo).Add(out.Target.Hold)
	f.note(fmt.Sprintf("%.1f °C: not before %s into the segment, no late end and no central estimate: the readings still move away from the room and slow steadily, and a body settling toward a fixed temperature (an oven left at its setting) never moves faster than it does now; the way left over the present speed is the soonest it can get there.", out.Celsius, seconds(lo).Round(time.Second)))
	return out
}

// quarterLines fits a least-squares line to each quarter of the readings (speedFloor,
// peakFloor) and returns them with q, the readings in a quarter, and dir, the sign of
// the way from the last quarter's line to level; ok is false with fewer than 5
// readings a quarter or no way left.
func (f *forecaster) quarterLines(level float64) (quarters [4]quarterLine, q int, dir float64, ok bool) {
	t, c := f.p.Times, f.p.Celsius
	n := len(c)
	q = n / 4
	if q < 5 {
		return quarters, q, 0, false
	}
	for k := range quarters {
		a, b := n-(4-k)*q, n-(3-k)*q
		quarters[k] = fitQuarter(t[a:b], c[a:b])
	}
	dir = sign(level - quarters[3].end)
	return quarters, q, dir, dir != 0
}

// speedFloor is the soonest the readings can reach level, s from the segment start, if
// they settle toward a fixed temperature beyond it: the last reading's time plus the
// way left over the speed of the readings' last quarter toward level. Both come from
// the last quarter's least-squares line, so that a noisy or quantised last reading
// neither stretches nor shrinks the way left (on a slowing curve the line ends beyond
// the curve, so the way is short: the early side). The speed is taken high by a
// one-sided 97.7 % Student-t quantile of its standard error, inflated for the
// residuals' lag-1 autocorrelation (Inflation): few readings or slowly wandering noise
// make the bound earlier, not later. ok is false unless the readings head toward level
// and slow steadily: each of their four quarters (at least 5 readings each) slower
// than the one before it beyond the noise, the quarters' speed ratios within a factor
// of two of each other (see speedBound) — or, when the first quarter is slower than
// the second beyond the noise (a thermocouple inside the specimen lagging its
// surface: the curve's one inflection), the last three. Past the inflection a body
// with a fixed surroundings only slows (its first mode dominates; common practice of
// transient conduction, from memory), so the bound stands; a door or a program step
// inside the last three quarters still breaks their steady slowing. One that came so
// late that only the last readings show it (the sensor just speeding up again) is
// caught by the last quarter's two halves: the later faster than the earlier beyond
// the noise (halves of at least 5 readings), no bound.
func (f *forecaster) speedFloor(level float64) (float64, bool) {
	t, c := f.p.Times, f.p.Celsius
	n := len(c)
	quarters, q, dir, ok := f.quarterLines(level)
	if !ok {
		return 0, false
	}
	last := quarters[3]
	var v, se [4]float64
	for k, l := range quarters {
		v[k], se[k] = dir*l.slope, l.se
	}
	// A sensor inside the specimen lags its surface: the readings first speed up,
	// then slow as the body settles. A first quarter slower than the second beyond
	// the noise is that lag, and the steady slowing is asked of the last three.
	from := 0
	if v[1]-v[0] > 2*math.Hypot(se[0], se[1]) {
		from = 1
	}
	var ratio [3]float64
	r := ratio[from:]
	for k := from; k < 3; k++ {
		if v[k+1] <= 2*se[k+1] || v[k]-v[k+1] <= 2*math.Hypot(se[k], se[k+1]) {
			return 0, false
		}
		r[k-from] = v[k+1] / v[k]
	}
	if slices.Max(r) > 2*slices.Min(r) {
		return 0, false
	}
	if h := q / 2; h >= 5 {
		a, b := fitQuarter(t[n-2*h:n-h], c[n-2*h:n-h]), fitQuarter(t[n-h:], c[n-h:])
		if dir*b.slope-dir*a.slope > 2*math.Hypot(a.se, b.se) {
			return 0, false
		}
	}
	z := speedQuantile(q-2) * Inflation(last.rho(t[n-q:], c[n-q:]), maxSpeedInflation)
	return t[n-1] + dir*(level-last.end)/(v[3]+z*se[3]), true
}

// maxSpeedInflation caps the autocorrelation's inflation of the speed's standard error
// (ρ = 0.98 reaches it).
const maxSpeedInflation = 10.0

// speedQuantile is the one-sided 97.7 % point of Student's t with dof degrees of
// freedom (two standard errors for a large sample), 1 degree below 1.
func speedQuantile(dof int) float64 {
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(max(dof, 1))}.Quantile(0.97725)
}

// quarterLine is the least-squares line through a quarter of the readings: the means
// it passes through, its slope (°C/s) and standard error, and its value at the
// quarter's last reading.
type quarterLine struct{ mt, mc, slope, se, end float64 }

// fitQuarter fits a quarterLine to readings c at times t.
func fitQuarter(t, c []float64) quarterLine {
	mt, mc, b, se := leastSquares(t, c)
	return quarterLine{mt: mt, mc: mc, slope: b, se: se, end: mc + b*(t[len(t)-1]-mt)}
}

// rho is the lag-1 autocorrelation of the residuals of readings c at times t about the
// line (0 when they do not vary or are fewer than 3).
func (l quarterLine) rho(t, c []float64) float64 {
	if len(t) < 3 {
		return 0
	}
	var num, den, prev float64
	for i := range t {
		r := c[i] - l.mc - l.slope*(t[i]-l.mt)
		den += r * r
		if i > 0 {
			num += r * prev
		}
		prev = r
	}
	if den == 0 {
		return 0
	}
	return num / den
}
