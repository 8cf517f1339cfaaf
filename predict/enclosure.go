package predict

import (
	"fmt"
	"math"
	"slices"
	"time"
)

// enclosureForecast forecasts a specimen whose readings move away from the room
// toward an enclosure's unmeasured temperature (an oven or a cold chamber whose air
// is not measured and whose set point the specimen does not give): nil when that
// does not apply or the readings do not resolve where they settle, and the engine's
// usual answer stands ("not before" at most: see directionUnknown).
//
// The readings still at their extreme, far from the room, are either a specimen
// settling toward an enclosure's temperature or a thermocouple catching up with a hot
// specimen. Either way they approach a level beyond them, and once they have bent
// toward it the level is in the readings: the lumped exponential (constant h) and the
// lumped model with constant convection plus radiation to surroundings at the same
// fitted level (the enclosure's air and walls at its setting) are fitted with the
// level free — no room prior, which an oven's level lies far outside — and the better
// by AIC is kept. Its level must lie beyond the last reading by more than its own
// 90 % uncertainty (widened for correlated residuals, plus the misfit), and the
// residuals must not be structured; then the targets are forecast as for a fitted
// ambient (a target within the level's uncertainty gets "not before" only, from the
// profile over the levels the readings allow). A handling target is never forecast
// this way: the specimen is warming, or its sensor is catching up with it.
//
// A flat baseline at the room before the specimen went in (it reads the room, then
// rises with no step) is left out of the fit: the first reading off it starts the
// segment (baselineEnd).
func enclosureForecast(p LumpedProblem, start time.Time, targets []Target, opt AnalyzeOptions) *Forecast {
	n := len(p.Times)
	if p.Ambient != nil || opt.Specimen != nil || n < 2*minPointsH {
		return nil
	}
	m := runningMedian(p.Celsius)
	away := stillAway(m, readingTolerance(p.Celsius))
	if _, sure := extremeSide(m, nil); away == 0 || sure {
		return nil
	}
	if b := baselineEnd(p.Celsius, m); b > 0 {
		tail := LumpedProblem{Times: make([]float64, n-b), Celsius: p.Celsius[b:]}
		for i, t := range p.Times[b:] {
			tail.Times[i] = t - p.Times[b]
		}
		start, p = start.Add(seconds(p.Times[b])), tail
		n = len(p.Times)
	}
	lr, err := FitLumped(p, &opt.Fit)
	if err != nil || sign(lr.Excess) != -away {
		return nil
	}
	fit, others := enclosureFits(p, &lr, -away)
	rho, misfit := fit.residuals()
	var spread float64 // the levels of the laws the readings do not tell apart
	for _, o := range others {
		spread = max(spread, math.Abs(o.ambient()-fit.ambient()))
	}
	u := 1.645*fit.ambientErr()*Inflation(rho, 5) + misfit + spread
	last := p.Celsius[n-1]
	if mismatched(fit, fit.rmse()) || !(away*(fit.ambient()-last) > u) {
		return nil
	}
	f := &Forecast{Biot: math.NaN(), Points: n, SegmentStart: start, FittedAt: start.Add(seconds(p.Times[n-1]))}
	if h, ok := fit.(hFitted); ok {
		describeEnclosureH(f, h.r, start)
	} else {
		describeLumped(f, &lr, start, false, nil)
		f.Notes = append(f.Notes[:len(f.Notes)-1], "Model: lumped exponential (constant h) toward the enclosure's level; it fits better than constant convection plus radiation to it.")
		noteNoSpecimen(f)
	}
	way, what := "rise", "an oven"
	if away < 0 {
		way, what = "fall", "a cold chamber"
	}
	f.Notes = append([]string{fmt.Sprintf(
		"The readings %s away from the room and have bent toward a level: taken as the temperature of %s not given as the specimen's convection, fitted with no room prior, %.1f ± %.1f °C (90 %%, with the spread over the surface laws the readings allow), beyond the last reading by more than its uncertainty. A thermocouple still catching up with a hot specimen reads alike until the readings turn, so no handling target is judged and no target behind the readings is called reached; give the specimen convection: chamber with chamber_c, or measure the ambient (role: ambient), to be sure.",
		way, what, fit.ambient(), u)}, f.Notes...)
	noteResiduals(f, fit, opt.Interval)
	opt.enclosure = true
	is := opt.Interval
	if len(targets) > 0 {
		is = intervalFor(f, p, fit, freeOf(fit), opt)
	}
	var ef fitted = fit
	if len(others) > 0 {
		ef = lawSpread{fit, others}
	}
	fc := newForecaster(ef, &p, start, is.withDefaults())
	fc.notes = nil
	fc.fit, fc.ambient, fc.side, fc.away, fc.mismatch = ef, fit.ambient(), fit.side(), 0, false
	f.Targets = make([]TargetForecast, len(targets))
	for i, tg := range targets {
		if !tg.IsWithin() && away*(tg.Celsius-last) <= fc.tol {
			// Passed on the way from the room: reached in an oven, but a hot specimen's
			// thermocouple catching up passes the temperatures it will cool back to.
			f.Targets[i] = TargetForecast{Target: tg, Celsius: tg.Celsius, State: StateInsufficient}
			fc.note(fmt.Sprintf("%.1f °C lies behind readings still moving away from the room: a specimen heating in an oven has passed it, but one whose thermocouple is still catching up with it will come back to it, so settle calls it neither reached nor forecast until the readings turn or the ambient is measured.", tg.Celsius))
			continue
		}
		f.Targets[i] = fc.target(tg)
	}
	f.Notes = append(f.Notes, fc.notes...)
	openHandlingNoPoint(f.Targets)
	return f
}

// enclosureEmissivities are the emissivities of the enclosure's surface laws, at a
// convective coefficient of enclosureH: the radiation's share of h, the one thing the
// law's shape depends on once the heat capacity is fitted, from nearly none (the
// plain exponential is tried beside them) to a black body under gentle circulation,
// on a geometric grid fine enough (a factor 1.3 apart) that the profile over it
// (enclosureChi2) does not skip the readings' own optimum.
var enclosureEmissivities = func() []float64 {
	var e []float64
	for x := 0.01; x < 1; x *= 1.3 {
		e = append(e, x)
	}
	return e
}()

// enclosureH is the convective coefficient of the enclosure's surface laws, W/(m²·K):
// an oven's circulation (10–30 in the benchmark's generator; our choice).
const enclosureH = 20.0

// enclosureChi2 is the 90 % quantile of χ² with one degree of freedom: the laws whose
// fit is worse than the best by less (n_eff·ln(SSR/SSR_best), a profile likelihood
// over the radiation's share) are as consistent with the readings as the best, and
// their levels bound the level's model-form uncertainty.
const enclosureChi2 = 2.71

// enclosureFits fits the lumped exponential lr's readings p under each of the
// enclosure's surface laws (constant convection plus radiation to surroundings at the
// fitted level, no room prior) and returns the best by residual (lr itself when it
// is), and the others the readings do not tell from it (enclosureChi2) whose curve
// runs the same way (side).
func enclosureFits(p LumpedProblem, lr *LumpedResult, side float64) (best fitted, others []fitted) {
	all := []fitted{lumpedFitted{lr}}
	for _, e := range enclosureEmissivities {
		law := DefaultSurfaceLaw
		law.ForcedH, law.Emissivity = enclosureH, e
		r, err := fitH(HProblem{Times: p.Times, Celsius: p.Celsius, Law: law}, lr)
		if err == nil && r.table.side == side {
			all = append(all, hFitted{&r})
		}
	}
	best = all[0]
	for _, f := range all[1:] {
		if f.rmse() < best.rmse() {
			best = f
		}
	}
	rho, _ := best.residuals()
	rho = max(rho, 0)
	nEff := float64(len(p.Times)) * (1 - rho) / (1 + rho)
	for _, f := range all {
		if f != best && nEff*math.Log(f.rmse()*f.rmse()/(best.rmse()*best.rmse())) <= enclosureChi2 {
			others = append(others, f)
		}
	}
	return best, others
}

// describeEnclosureH fills the forecast fields of an h(T) fit toward an enclosure.
func describeEnclosureH(f *Forecast, r *HResult, start time.Time) {
	f.Model, f.Ambient, f.RMSE = ModelLumpedH, r.Ambient, r.RMSE
	r.table.complete() // f.Curve may be called from any goroutine
	f.TimeConstant = seconds(r.Capacity / r.HAt(r.Value(f.FittedAt.Sub(start).Seconds())))
	f.Params = []Param{
		{Name: "ambient_c", Value: r.Ambient, StdErr: r.AmbientErr, Unit: "°C"},
		{Name: "initial_c", Value: r.Initial, StdErr: r.InitialErr, Unit: "°C"},
		{Name: "capacity_j_m2k", Value: r.Capacity, StdErr: r.CapacityErr, Unit: "J/(m²·K)"},
	}
	f.Notes = append(f.Notes, fmt.Sprintf(
		"Model: lumped with constant convection (shape of about %.0f W/(m²·K), scaled by the fitted heat capacity per unit area) plus radiation with emissivity %.2g, air and walls at the fitted level (an enclosure's circulation).",
		r.Law.ForcedH, r.Law.Emissivity))
	noteNoSpecimen(f)
	f.Curve = func(t time.Time) float64 { return r.Value(t.Sub(start).Seconds()) }
}

// baselineEnd returns the last reading of a flat run at the room that opens the
// readings c (m their running median), the first reading after it (the specimen went
// in between the two), or 0 when there is none: a specimen put into an oven at the room's temperature reads the room until
// it goes in and then rises with no step, so a fit from the first reading bends to fit
// the corner. Flat is within readingTolerance (three times the noise) of the first
// median, which must lie within priorFar of the room prior.
func baselineEnd(c, m []float64) int {
	if math.Abs(m[0]-roomPrior) >= priorFar {
		return 0
	}
	band := readingTolerance(c)
	j := 0
	for j+1 < len(m) && math.Abs(m[j+1]-m[0]) <= band {
		j++
	}
	if j == 0 || j >= len(m)-2*minPointsH {
		return 0
	}
	return j + 1
}

// lawSpread is an enclosure fit with the fits under the other surface laws the
// readings do not tell from it (enclosureFits): before the readings have settled they
// put the level apart by more than the best fit's own standard error. The farthest of
// their levels widens the level's uncertainty (ambientErr, as a further 90 %
// half-width) and the farthest of their crossings each crossing time's (a crossing
// one of them does not reach leaves the level's uncertainty to make the target's
// interval open-ended).
type lawSpread struct {
	fitted
	others []fitted
}

func (l lawSpread) ambientErr() float64 {
	var d float64
	for _, o := range l.others {
		d = max(d, math.Abs(o.ambient()-l.fitted.ambient()))
	}
	return math.Hypot(l.fitted.ambientErr(), d/1.645)
}

func (l lawSpread) crossing(level float64, within bool) (t, variance, rate float64, ok bool) {
	t, variance, rate, ok = l.fitted.crossing(level, within)
	var d float64
	for _, o := range l.others {
		if to, _, _, reach := o.crossing(level, within); reach {
			d = max(d, math.Abs(to-t))
		}
	}
	return t, variance + math.Pow(d/1.645, 2), rate, ok
}

// stillAway is awayFromRoom for readings that may have all but settled: +1 when the
// running median m lies far above the room (priorFar) and its last value is within tol
// (the readings' noise) of its highest, −1 likewise below, else 0.
func stillAway(m []float64, tol float64) float64 {
	n := len(m)
	hi, lo := slices.Max(m), slices.Min(m)
	up, down := hi-roomPrior, roomPrior-lo
	switch {
	case up >= priorFar && up > down && hi-m[n-1] <= tol:
		return 1
	case down >= priorFar && down > up && m[n-1]-lo <= tol:
		return -1
	}
	return 0
}
