package predict

import (
	"math"
	"time"
)

// IntervalSettings tunes the forecast intervals. The zero value is ready to use; each
// field documents its default.
type IntervalSettings struct {
	// Z is the standard-normal quantile of the two-sided interval. Zero means 1.645,
	// a 90 % interval.
	Z float64
	// MaxInflation caps the widening for autocorrelated residuals. Zero means 5.
	MaxInflation float64
	// ModelError is the standard deviation of the model-form error of a crossing
	// time, as a fraction of the horizon h (time from the last reading to the
	// crossing) at h equal to the data's span, growing as sqrt(h/span) beyond it:
	// sd = ModelError·h·sqrt(h/span). No parameter covariance sees this error (the
	// true curve is not exactly any model's); zero means 0.14, calibrated on the
	// generated benchmark in testdata/bench so that 90 % intervals cover about 90 %
	// (see TestAccuracyTable). Negative means none.
	ModelError float64
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
	return s
}

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
//     last reading.
//
// The ambient is assumed to stay at fit.Ambient from the last reading on.
func ForecastLumped(fit *LumpedResult, p *LumpedProblem, start time.Time, targets []Target, s *IntervalSettings) []TargetForecast {
	var m fitted
	if fit != nil && fit.Status == FitSuccess {
		m = lumpedFitted{fit}
	}
	return forecastTargets(m, p, start, targets, s)
}

// forecastTargets forecasts each target from a fitted model (nil when there is none).
func forecastTargets(m fitted, p *LumpedProblem, start time.Time, targets []Target, s *IntervalSettings) []TargetForecast {
	var is IntervalSettings
	if s != nil {
		is = *s
	}
	f := newForecaster(m, p, start, is.withDefaults())
	out := make([]TargetForecast, len(targets))
	for i, tg := range targets {
		out[i] = f.target(tg)
	}
	return out
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
}

func newForecaster(fit fitted, p *LumpedProblem, start time.Time, s IntervalSettings) *forecaster {
	f := &forecaster{p: p, start: start, s: s, ambient: math.NaN()}
	n := len(p.Celsius)
	switch {
	case fit != nil:
		f.fit, f.ambient, f.side = fit, fit.ambient(), fit.side()
		_, misfit := fit.residuals()
		f.mismatch = misfit > 0.2 && misfit > 2*math.Sqrt(max(fit.rmse()*fit.rmse()-misfit*misfit, 0))
	case p.Ambient != nil && n > 0:
		f.ambient = p.Ambient[n-1]
		f.side = sign(p.Celsius[n-1] - f.ambient)
	case n > 1:
		f.side = sign(p.Celsius[0] - p.Celsius[n-1])
	}
	return f
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
		return out
	}
	if hf, ok := f.fit.(handlingFitted); ok && tg.Handling {
		if t, v, rate, reach, used := hf.handlingCrossing(out.Celsius); used {
			return f.core(out, t, v, rate, reach)
		}
	}
	if entry, ok := f.entry(tg, out.Celsius); ok {
		return f.observed(out, entry)
	}
	if f.fit == nil {
		return out
	}
	return f.predicted(out)
}

// entry returns the index of the reading at which the data entered the target's side:
// the first such reading, or with a Hold the first of the final run of such readings.
func (f *forecaster) entry(tg Target, level float64) (int, bool) {
	across := func(i int) bool {
		l := level
		if tg.IsWithin() && f.p.Ambient != nil {
			l = f.p.Ambient[i] + f.side*tg.Within
		}
		return f.side*(f.p.Celsius[i]-l) <= 0
	}
	n := len(f.p.Celsius)
	if tg.Hold == 0 {
		for i := range n {
			if across(i) {
				return i, true
			}
		}
		return 0, false
	}
	i := n
	for i > 0 && across(i-1) {
		i--
	}
	return i, i < n
}

// observed fills a reached or holding forecast from the entry reading.
func (f *forecaster) observed(out TargetForecast, entry int) TargetForecast {
	n := len(f.p.Times)
	at := f.abs(f.p.Times[entry]).Add(out.Target.Hold)
	out.At, out.State = at, StateReached
	if at.After(f.abs(f.p.Times[n-1])) {
		out.State, out.Earliest, out.Latest = StateHolding, at, at
	}
	return out
}

// seenDecay is the share of its initial excess a curve with a fitted ambient must
// have lost before the fitted ambient counts as seen.
const seenDecay = 0.75

// asymptoteSeen reports whether the ambient is measured or the readings have covered
// seenDecay of their decay toward the fitted one.
func (f *forecaster) asymptoteSeen() bool {
	if f.p.Ambient != nil {
		return true
	}
	n := len(f.p.Celsius)
	first, last := f.p.Celsius[0]-f.ambient, f.p.Celsius[n-1]-f.ambient
	return math.Abs(last) <= (1-seenDecay)*math.Abs(first)
}

// handlingFitted is a fit that can judge a handling target on the specimen's hottest
// point rather than at the sensor (a conduction model with a surface thermocouple).
type handlingFitted interface {
	// handlingCrossing is crossing for the hottest point; used is false when the
	// sensor is the hottest point and its own curve serves.
	handlingCrossing(level float64) (t, variance, rate float64, ok, used bool)
}

// core fills a handling target's forecast from the hottest point's fitted crossing:
// reached (At the fitted crossing, not an observed one, since the sensor does not see
// the hottest point) when it lies before the last reading, else as predicted.
func (f *forecaster) core(out TargetForecast, tStar, v, rate float64, ok bool) TargetForecast {
	last := f.p.Times[len(f.p.Times)-1]
	if ok && tStar+out.Target.Hold.Seconds() <= last {
		out.State, out.At = StateReached, f.abs(tStar).Add(out.Target.Hold)
		return out
	}
	return f.predictedFrom(out, tStar, v, rate, ok)
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
		}
		return out
	}
	sd := math.Sqrt(max(v, 0)) * Inflation(rho, f.s.MaxInflation)
	level := misfit / rate // level error through the slope
	last := f.p.Times[len(f.p.Times)-1]
	form := 0.0
	if span := last - f.p.Times[0]; f.s.ModelError > 0 && span > 0 && tStar > last {
		h := tStar - last
		form = f.s.ModelError * h * math.Sqrt(h/span)
	}
	half := f.s.Z * math.Sqrt(sd*sd+level*level+form*form)
	hold := out.Target.Hold
	out.State = StatePredicted
	out.At = f.abs(max(tStar, last)).Add(hold)
	out.Earliest = f.abs(max(tStar-half, last)).Add(hold)
	out.Latest = f.abs(max(tStar+half, last)).Add(hold)
	return out
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
