package predict

import (
	"fmt"
	"math"
	"sync"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/settle-lab/settle/predict/conduction"
)

// Conduction model names reported in Forecast.Model.
const (
	// ModelConductionSeries is the exact series (or product) solution of conduction
	// inside the specimen with a constant h, from predict/conduction.
	ModelConductionSeries = "conduction-series"
	// ModelConductionFV is the one-dimensional finite-volume conduction model with
	// the natural-convection-plus-radiation h(Ts), from predict/conduction.
	ModelConductionFV = "conduction-fv"
)

// Thresholds of the move from a lumped model to conduction.
const (
	// conductionBi is the lumped Biot number h·(V/A)/k at and above which a lumped
	// model is outside its validity range (common practice, DESIGN.md physics 1).
	conductionBi = 0.1
	// hotExcess is the initial excess over the ambient, K, above which the FV model
	// with h(T) is tried too: radiation and natural convection then change h
	// several-fold during the cooling (our choice).
	hotExcess = 200.0
	// maxFVPoints caps the readings the FV fit sees (evenly thinned), so a long
	// segment stays within the daemon's fit budget.
	maxFVPoints = 400
)

// condFitted adapts a conduction fit for the forecaster: the curve at the sensor,
// and the hottest point for handling targets.
type condFitted struct {
	fit        conduction.Fit
	offset     float64 // model time at the segment's t = 0, s
	sensor     conduction.Position
	amb        float64
	ambErr     float64
	initial    float64
	initialErr float64
	// cov is the fit's parameter covariance (ln Bi or ln scale, T0, and T∞ when
	// fitted), nil when singular; lnErr is the standard error of its first entry.
	cov   *mat.SymDense
	lnErr float64
	// rmse and the residual statistics.
	rmsev, rho, misfit float64
	// coreBased is set when handling targets are judged on the hottest point because
	// the sensor is not it.
	coreBased bool

	once   sync.Once
	varied []conduction.Fit // the fit with each parameter moved by step[j]; nil entries failed
	step   []float64
}

func (c *condFitted) ambient() float64                 { return c.amb }
func (c *condFitted) side() float64                    { return sign(c.initial - c.amb) }
func (c *condFitted) residuals() (rho, misfit float64) { return c.rho, c.misfit }
func (c *condFitted) value(t float64) float64          { return c.fit.Temperature(c.sensor, t+c.offset) }
func (c *condFitted) ambientErr() float64              { return c.ambErr }
func (c *condFitted) rmse() float64                    { return c.rmsev }

// atSensor and hottest are the two curves a crossing is found on, for any fit.
func (c *condFitted) atSensor(f conduction.Fit, t float64) float64 {
	return f.Temperature(c.sensor, t+c.offset)
}
func (c *condFitted) hottest(f conduction.Fit, t float64) float64 { return f.Hottest(t + c.offset) }

// crossing is the sensor curve's crossing of level.
func (c *condFitted) crossing(level float64, within bool) (t, variance, rate float64, ok bool) {
	return c.cross(c.atSensor, level, within)
}

// handlingCrossing is the hottest point's crossing of level when the sensor is not
// the hottest point; ok is false when the sensor's own curve should be used.
func (c *condFitted) handlingCrossing(level float64) (t, variance, rate float64, ok, used bool) {
	if !c.coreBased {
		return 0, 0, 0, false, false
	}
	t, variance, rate, ok = c.cross(c.hottest, level, false)
	return t, variance, rate, ok, true
}

// cross finds where curve reaches level by bisection (the curves are monotone: a
// uniform start, one ambient), and the delta-method variance of that time from the
// fit's parameter covariance (see variance).
func (c *condFitted) cross(curve func(conduction.Fit, float64) float64, level float64, within bool) (t, variance, rate float64, ok bool) {
	side := c.side()
	if side == 0 || sign(level-c.amb) != side {
		return 0, 0, 0, false
	}
	above := func(t float64) bool { return side*(curve(c.fit, t)-level) > 0 }
	if !above(0) {
		return 0, 0, 0, true
	}
	hi := 1.0
	for above(hi) {
		if hi *= 2; hi > maxOffset {
			return 0, 0, 0, false
		}
	}
	lo := 0.0
	for range 60 {
		mid := (lo + hi) / 2
		if above(mid) {
			lo = mid
		} else {
			hi = mid
		}
		if hi-lo <= 1e-6*hi {
			break
		}
	}
	t = (lo + hi) / 2
	dt := max(1e-3*t, 1e-3)
	slope := (curve(c.fit, t+dt) - curve(c.fit, max(t-dt, 0))) / (t + dt - max(t-dt, 0))
	if !(math.Abs(slope) > 0) {
		return t, 0, 0, true
	}
	return t, c.variance(curve, t, slope, within), math.Abs(slope), true
}

// variance is the delta-method variance gᵀΣg of the crossing time t of curve, Σ the
// fit's covariance. By the implicit function theorem the crossing moves by
// g_j = (∂level/∂p_j − ∂curve/∂p_j)/slope when parameter p_j moves, ∂curve/∂p_j a
// forward difference of the fit varied in p_j at t (a Within level moves with the
// ambient). +Inf when the covariance or a variation is missing.
func (c *condFitted) variance(curve func(conduction.Fit, float64) float64, t, slope float64, within bool) float64 {
	if c.cov == nil {
		return math.Inf(1)
	}
	c.once.Do(c.vary)
	p := c.cov.SymmetricDim()
	g := make([]float64, p)
	base := curve(c.fit, t)
	for j := range p {
		if c.varied[j] == nil {
			return math.Inf(1)
		}
		dLevel := 0.0
		if j == 2 && within {
			dLevel = 1
		}
		g[j] = (dLevel - (curve(c.varied[j], t)-base)/c.step[j]) / slope
	}
	v := 0.0
	for a := range p {
		for b := range p {
			v += g[a] * c.cov.At(a, b) * g[b]
		}
	}
	return v
}

// vary fills c.varied with the fit moved in each parameter of the covariance: ln Bi
// or ln scale by 1e-3, the temperatures by 1e-3 of the initial excess.
func (c *condFitted) vary() {
	p := c.cov.SymmetricDim()
	exc := max(math.Abs(c.initial-c.amb), 1)
	c.step = []float64{1e-3, 1e-3 * exc, 1e-3 * exc}[:p]
	c.varied = make([]conduction.Fit, p)
	for j := range p {
		dp := make([]float64, p)
		dp[j] = c.step[j]
		if f, err := c.fit.Varied(dp); err == nil {
			c.varied[j] = f
		}
	}
}

// condResult is a conduction fit ready for the forecaster, with what the notes need.
type condResult struct {
	m     *condFitted
	model string
	free  int
	n     int
	// lumpedBi is h·(V/A)/k (at the start for FV), bi the series Bi (on Size).
	lumpedBi, bi float64
	h            float64
	// offset is the fitted time from the uniform start to the segment's onset, s.
	offset float64
	fv     *conduction.FVFit
	series *conduction.SeriesFit
	spec   conduction.Specimen
}

// fitConduction fits the series model, and the FV model too for a hot
// one-dimensional specimen, and returns the FV model unless the series fits better
// by more than 2 in AIC; an error when the series fit fails.
func fitConduction(p LumpedProblem, sp *Specimen) (*condResult, error) {
	cs, err := sp.Conduction()
	if err != nil {
		return nil, err
	}
	amb := math.NaN()
	if p.Ambient != nil {
		amb = p.Ambient[len(p.Ambient)-1]
	}
	off, sf, err := fitOrigin(cs, p, amb)
	if err != nil {
		return nil, err
	}
	times := shifted(p.Times, off)
	free := 3
	if !math.IsNaN(amb) {
		free = 2
	}
	best := &condResult{model: ModelConductionSeries, free: free, n: sf.N, lumpedBi: sf.LumpedBi, bi: sf.Bi.Value,
		h: sf.H.Value, series: sf, spec: cs, offset: off}
	best.m = newCondFitted(sf, cs, p, off, sf.Initial, sf.Ambient, sf.Cov)
	if !cs.Shape.OneDimensional() || math.Abs(sf.Initial.Value-sf.Ambient.Value) < hotExcess {
		return best, nil
	}
	if _, _, err := cs.Convection(); err != nil {
		return best, nil
	}
	times, temps := thin(times, p.Celsius, maxFVPoints)
	fv, err := conduction.FitFV(cs, times, temps, amb)
	if err != nil {
		return best, nil
	}
	alt := &condResult{model: ModelConductionFV, free: free, n: sf.N, bi: fv.BiStart, h: fv.HStart,
		lumpedBi: fv.HStart * cs.LumpedLength() / cs.Conductivity, fv: fv, series: sf, spec: cs, offset: off}
	alt.m = newCondFitted(fv, cs, p, off, fv.Initial, fv.Ambient, fv.Cov)
	// The physics of a hot specimen in still air (h(T)) is the default on a tie, as
	// between the lumped models: the series must beat it by more than 2 in AIC.
	if aic(best.n, best.free, best.m.rmsev) < aic(alt.n, alt.free, alt.m.rmsev)-2 {
		return best, nil
	}
	return alt, nil
}

// Origin search: the segment's onset (the highest reading, see Onset) can fall
// after the moment the specimen was uniform — a centre thermocouple reads a plateau
// while the surface cools — and the series solution needs that moment. The fit
// tries offsets 0 and originFirst·span·2^k up to originMax·span, keeping the best.
const (
	originFirst = 0.002
	originMax   = 0.25
)

// fitOrigin fits the series model at each trial offset of the time origin and
// returns the offset with the least residual and its fit.
func fitOrigin(cs conduction.Specimen, p LumpedProblem, amb float64) (float64, *conduction.SeriesFit, error) {
	span := p.Times[len(p.Times)-1] - p.Times[0]
	bestOff := 0.0
	best, err := conduction.FitSeries(cs, p.Times, p.Celsius, amb)
	if err != nil {
		return 0, nil, err
	}
	for off := originFirst * span; off <= originMax*span; off *= 2 {
		sf, err := conduction.FitSeries(cs, shifted(p.Times, off), p.Celsius, amb)
		if err != nil {
			break
		}
		if sf.RMSE >= best.RMSE {
			break
		}
		best, bestOff = sf, off
	}
	return bestOff, best, nil
}

// shifted returns times + off (times itself when off is 0).
func shifted(times []float64, off float64) []float64 {
	if off == 0 {
		return times
	}
	out := make([]float64, len(times))
	for i, t := range times {
		out[i] = t + off
	}
	return out
}

// thin returns at most n evenly spaced readings, always keeping the last.
func thin(t, y []float64, n int) ([]float64, []float64) {
	if len(t) <= n {
		return t, y
	}
	step := float64(len(t)-1) / float64(n-1)
	ot, oy := make([]float64, n), make([]float64, n)
	for i := range n {
		k := min(int(math.Round(float64(i)*step)), len(t)-1)
		ot[i], oy[i] = t[k], y[k]
	}
	return ot, oy
}

// newCondFitted adapts fit and computes its residual statistics on all of p.
func newCondFitted(fit conduction.Fit, cs conduction.Specimen, p LumpedProblem, off float64, t0, amb conduction.Estimate, cov *mat.SymDense) *condFitted {
	c := &condFitted{fit: fit, sensor: cs.Sensor, offset: off, amb: amb.Value, ambErr: amb.StdErr,
		initial: t0.Value, initialErr: t0.StdErr, cov: cov, lnErr: math.NaN()}
	if cov != nil {
		c.lnErr = math.Sqrt(cov.At(0, 0))
	}
	r := make([]float64, len(p.Times))
	for i, t := range p.Times {
		r[i] = p.Celsius[i] - c.value(t)
	}
	st := statsOf(r)
	c.rmsev = math.Sqrt(st.ssr / float64(len(r)))
	c.rho = st.rho
	c.misfit = math.Sqrt(max(0, c.rmsev*c.rmsev-st.vonNeumann))
	cooling := c.initial > c.amb
	c.coreBased = !(cooling && cs.Sensor == conduction.Centre)
	return c
}

// chooseConduction reports whether the conduction fit cr replaces the lumped model
// m (with Biot number lumpedBi, NaN when unknown): when the fitted lumped Bi is 0.1 or
// more, or when the lumped residuals are structured and conduction fits better by
// AIC. why says which.
func chooseConduction(cr *condResult, m fitted, lumpedN, lumpedFree int) (bool, string) {
	if cr.lumpedBi >= conductionBi {
		return true, fmt.Sprintf("the fitted Biot number h·(V/A)/k is %.2g, at or above 0.1, so the specimen is not uniform in temperature", cr.lumpedBi)
	}
	if m == nil {
		return false, ""
	}
	al, ac := aic(lumpedN, lumpedFree, m.rmse()), aic(cr.n, cr.free, cr.m.rmsev)
	if mismatched(m, m.rmse()) && ac < al-2 {
		return true, fmt.Sprintf("the lumped residuals are structured and conduction fits better (AIC lower by %.1f)", al-ac)
	}
	return false, ""
}

// describeConduction fills the forecast fields of a conduction fit.
func describeConduction(f *Forecast, cr *condResult, start time.Time, why string) {
	c := cr.m
	f.Model, f.Ambient, f.RMSE = cr.model, c.amb, c.rmsev
	f.Biot, f.OutOfRange = cr.lumpedBi, false
	f.TimeConstant = 0
	measured := c.ambErr == 0
	f.Params = []Param{
		{Name: "ambient_c", Value: c.amb, StdErr: measuredNaN(c.ambErr, measured), Unit: "°C"},
		{Name: "initial_c", Value: c.initial, StdErr: c.initialErr, Unit: "°C"},
		{Name: "h_w_m2k", Value: cr.h, StdErr: cr.h * c.lnErr, Unit: "W/(m²·K)"},
		{Name: "biot_size", Value: cr.bi, StdErr: cr.bi * c.lnErr},
	}
	if cr.fv != nil {
		f.Params = append(f.Params, Param{Name: "h_scale", Value: cr.fv.Scale.Value, StdErr: cr.fv.Scale.StdErr})
	}
	last := f.FittedAt.Sub(start).Seconds()
	f.Params = append(f.Params,
		Param{Name: "centre_c", Value: c.fit.Temperature(conduction.Centre, last+c.offset), StdErr: math.NaN(), Unit: "°C"},
		Param{Name: "surface_c", Value: c.fit.Temperature(conduction.Surface, last+c.offset), StdErr: math.NaN(), Unit: "°C"})
	what := "the exact series solution with a constant h"
	if cr.fv != nil {
		what = "a finite-volume solution with h(T) from natural convection and radiation"
	}
	f.Notes = append(f.Notes, fmt.Sprintf(
		"Model: %s — conduction inside the %v, %s; it replaces the lumped model because %s. Biot number %.2g (h·(V/A)/k; %.2g on the half-thickness or radius).",
		cr.model, cr.spec.Shape, what, why, cr.lumpedBi, cr.bi))
	f.Notes = append(f.Notes, fmt.Sprintf(
		"At the last reading the fitted centre is %.1f °C and the surface %.1f °C.",
		c.fit.Temperature(conduction.Centre, last+c.offset), c.fit.Temperature(conduction.Surface, last+c.offset)))
	if cr.series != nil && cr.series.AtBound && cr.fv == nil {
		f.Notes = append(f.Notes, "The curve does not pin the Biot number down (it ended at the search's bound); h is a bound, not an estimate.")
	}
	f.Curve = func(t time.Time) float64 { return c.value(t.Sub(start).Seconds()) }
	if c.sensor != conduction.Centre {
		f.Centre = func(t time.Time) float64 {
			return c.fit.Temperature(conduction.Centre, t.Sub(start).Seconds()+c.offset)
		}
	}
}

// noteHandling adds the core-lag note when a handling target is judged on the
// hottest point.
func noteHandling(f *Forecast, c *condFitted, targets []Target) {
	if !c.coreBased {
		return
	}
	for _, tg := range targets {
		if tg.Handling {
			note := "The handling forecast is based on the centre, which lags the surface: the thermocouple is on the surface, so handling targets use the fitted centre temperature, an estimate — verify with a contact thermometer."
			if c.side() < 0 {
				note = "The handling forecast is based on the outermost point (surface, edge or corner), which leads the thermocouple while heating: handling targets use its fitted temperature, an estimate — verify with a contact thermometer."
			}
			f.Notes = append(f.Notes, note)
			return
		}
	}
}
