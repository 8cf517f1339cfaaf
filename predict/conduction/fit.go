package conduction

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// ErrShape is matched (errors.Is) when a model does not handle the specimen's
// shape (the FV model is one-dimensional).
var ErrShape = errors.New("conduction: shape not handled by this model")

// ErrData is matched (errors.Is) by the errors the fits return for unusable
// readings.
var ErrData = errors.New("conduction: unusable readings")

// The Biot-number range the series fit searches, on Size.
const (
	MinFitBi = 1e-4
	MaxFitBi = 1e4
)

// Estimate is a fitted value with its standard error (NaN when unknown, 0 when the
// value was given rather than fitted).
type Estimate struct {
	Value, StdErr float64
}

// Fit is what both fits offer a forecaster: the fitted temperature anywhere in the
// specimen at any time.
type Fit interface {
	// Temperature returns the fitted temperature, °C, at position p and t seconds.
	Temperature(p Position, t float64) float64
	// Hottest returns the temperature of the hottest point at t (while cooling the
	// centre, while heating the surface or corner), the one a handling target must
	// be judged on.
	Hottest(t float64) float64
	// Varied returns the fit with its parameters moved by dp (in the order of the
	// fit's Cov), for numerical derivatives.
	Varied(dp []float64) (Fit, error)
}

// SeriesFit is the constant-h exact-series model fitted to a curve.
type SeriesFit struct {
	// Specimen is the specimen fitted.
	Specimen Specimen
	// Bi is the Biot number h·Size/k.
	Bi Estimate
	// H is the surface coefficient, W/(m²·K).
	H Estimate
	// Initial is the uniform temperature at t = 0, °C.
	Initial Estimate
	// Ambient is the temperature the specimen settles toward, °C (StdErr 0 when it
	// was given).
	Ambient Estimate
	// LumpedBi is h·(V/A)/k, the Biot number of the lumped-model rule Bi < 0.1.
	LumpedBi float64
	// AtBound is set when Bi ended at MinFitBi or MaxFitBi: the curve does not pin
	// it down, and Bi and H are bounds rather than estimates.
	AtBound bool
	// RMSE is the root-mean-square residual, °C.
	RMSE float64
	// N is the number of readings fitted.
	N int
	// Evaluations counts the model evaluations the search took.
	Evaluations int
	// Cov is the covariance σ²·(JᵀJ)⁻¹ at the optimum, σ² = SSR/(N − p), of the
	// parameters in the order ln Bi, Initial, Ambient (the last only when the
	// ambient was fitted); nil when JᵀJ is singular. It takes the residuals as
	// independent: widen it for their autocorrelation before use.
	Cov *mat.SymDense

	minFo   float64 // the Fo the model's terms are sized for
	model   seriesModel
	centre  productCurve
	surface productCurve
	corner  productCurve
	mean    productCurve
}

// checkReadings validates the inputs common to both fits.
func checkReadings(sp Specimen, times, celsius []float64, ambient float64) error {
	if err := sp.Validate(); err != nil {
		return err
	}
	need := 3
	if math.IsNaN(ambient) {
		need = 4
	} else if math.IsInf(ambient, 0) {
		return fmt.Errorf("%w: ambient %g is not finite", ErrData, ambient)
	}
	if len(times) != len(celsius) {
		return fmt.Errorf("%w: %d times but %d temperatures", ErrData, len(times), len(celsius))
	}
	if len(times) < need {
		return fmt.Errorf("%w: %d readings, need at least %d", ErrData, len(times), need)
	}
	for i, t := range times {
		if !finite(t) || t < 0 || !finite(celsius[i]) || (i > 0 && t < times[i-1]) {
			return fmt.Errorf("%w: reading %d (t=%g s, %g °C): times must be finite, >= 0 and non-decreasing, temperatures finite",
				ErrData, i, t, celsius[i])
		}
	}
	if !(times[len(times)-1] > 0) {
		return fmt.Errorf("%w: all readings at t = 0", ErrData)
	}
	return nil
}

// FitSeries fits the constant-h series model (the product solution for a short
// cylinder or block) to readings (times in seconds from the moment the specimen
// was uniformly at its initial temperature, e.g. out of the furnace; temperatures
// in °C) taken at sp.Sensor. It fits Bi (hence h = Bi·k/Size) and the initial
// temperature, and the ambient too when ambient is NaN.
//
// For a fixed Bi the model is linear in the initial excess and the ambient, so
// those are solved by linear least squares and only ln Bi is searched (variable
// projection, DESIGN.md physics section 1): a one-per-decade grid over
// [MinFitBi, MaxFitBi] and Brent's minimiser on a thinned copy of the curve (at
// most 256 points), then one parabolic step on the full curve. Standard errors
// come from the Jacobian at the solution (central difference in ln Bi).
func FitSeries(sp Specimen, times, celsius []float64, ambient float64) (*SeriesFit, error) {
	if err := checkReadings(sp, times, celsius, ambient); err != nil {
		return nil, fmt.Errorf("series fit: %w", err)
	}
	fo := make([]float64, len(times))
	for i, t := range times {
		fo[i] = sp.Fo(t)
	}
	pr := &projector{sp: sp, fo: fo, y: celsius, ambient: ambient, minFo: minPositive(fo)}
	u, atBound := pr.search()
	f := &SeriesFit{Specimen: sp, N: len(times), AtBound: atBound}
	pr.finish(f, u, pr.slope)
	return f, nil
}

// projector evaluates the variable-projection objective of a series fit.
type projector struct {
	sp      Specimen
	fo, y   []float64
	ambient float64 // NaN: fitted
	minFo   float64
	theta   []float64 // scratch
	slope   []float64 // dθ/d(ln Bi) from the parabolic step, nil if none
	evals   int
	last    seriesModel // the model last evaluated, whose roots start the next
	scratch []float64   // 4·len(fo) values for thetaAt
}

// linear returns, for θ/θi values th, the least-squares ambient and initial excess
// and the residual sum of squares over every stride-th reading.
func (pr *projector) linear(th []float64, stride int) (amb, exc, ssr float64) {
	var n, st, sy, stt, sty float64
	for i := stride - 1; i < len(th); i += stride {
		t, y := th[i], pr.y[i]
		if !math.IsNaN(pr.ambient) {
			y -= pr.ambient
		}
		n++
		st += t
		sy += y
		stt += t * t
		sty += t * y
	}
	if math.IsNaN(pr.ambient) {
		den := n*stt - st*st
		if !(den > 1e-12*n*stt) {
			return 0, 0, math.Inf(1)
		}
		exc = (n*sty - st*sy) / den
		amb = (sy - exc*st) / n
	} else {
		if !(stt > 0) {
			return 0, 0, math.Inf(1)
		}
		amb, exc = pr.ambient, sty/stt
	}
	for i := stride - 1; i < len(th); i += stride {
		r := pr.y[i] - amb - exc*th[i]
		ssr += r * r
	}
	return amb, exc, ssr
}

// thetaAt fills pr.theta with the sensor's θ/θi at every stride-th reading (from
// index stride−1, so a thinned curve skips the earliest readings and needs fewer
// terms) for Bi = e^u and returns the model.
func (pr *projector) thetaAt(u float64, stride int) seriesModel {
	pr.evals++
	minFo := pr.minFo
	if stride > 1 {
		minFo = math.Max(minFo, pr.fo[stride-1])
	}
	m := newSeriesModel(pr.sp, math.Exp(u), minFo, DefaultTerms, pr.last)
	pr.last = m
	c := m.curve(pr.sp.Sensor)
	if pr.theta == nil {
		pr.theta = make([]float64, len(pr.fo))
		pr.scratch = make([]float64, 4*len(pr.fo))
	}
	k := len(pr.fo) / stride // readings stride−1, 2·stride−1, …
	sub, out := pr.scratch[:k], pr.scratch[k:2*k]
	for j := range k {
		sub[j] = pr.fo[stride-1+j*stride]
	}
	c.fill(out, sub, pr.scratch[2*k:4*k])
	for j, v := range out {
		pr.theta[stride-1+j*stride] = v
	}
	return m
}

// ssr is the projected objective at u = ln Bi.
func (pr *projector) ssr(u float64, stride int) float64 {
	pr.thetaAt(u, stride)
	_, _, s := pr.linear(pr.theta, stride)
	return s
}

// search returns the best ln Bi and whether it lies at the end of the range: a
// one-per-decade grid and Brent's minimiser on a thinned curve (every stride-th
// reading, at most 256), then one parabolic step on the full curve.
func (pr *projector) search() (u float64, atBound bool) {
	lo, hi := math.Log(MinFitBi), math.Log(MaxFitBi)
	stride := max(1, (len(pr.fo)+255)/256)
	step := math.Log(10)
	best, bestS := lo, math.Inf(1)
	for v := lo; v <= hi+1e-9; v += step {
		if s := pr.ssr(v, stride); s < bestS {
			best, bestS = v, s
		}
	}
	a, b := math.Max(lo, best-step), math.Min(hi, best+step)
	u = fmin(func(v float64) float64 { return pr.ssr(v, stride) }, a, b, 1e-3)
	if stride > 1 {
		u = pr.parabola(u, 0.02, lo, hi)
	}
	return u, u-lo < 1e-3 || hi-u < 1e-3
}

// parabola returns the vertex of the parabola through the full-curve objective at
// u − d, u, u + d, kept within d of u and within [lo, hi]. It keeps the central
// difference dθ/du in pr.slope for the standard errors: the vertex is within d of
// u, and a slope from there changes the errors by far less than they are known to.
func (pr *projector) parabola(u, d, lo, hi float64) float64 {
	fm := pr.ssr(u-d, 1)
	pr.slope = append(pr.slope[:0], pr.theta...)
	fp := pr.ssr(u+d, 1)
	for i, v := range pr.theta {
		pr.slope[i] = (v - pr.slope[i]) / (2 * d)
	}
	f0 := pr.ssr(u, 1)
	curv := fp + fm - 2*f0
	if !(curv > 0) {
		return u
	}
	v := u - d*(fp-fm)/(2*curv)
	return math.Max(lo, math.Min(hi, math.Max(u-d, math.Min(u+d, v))))
}

// finish fills f from the solution u = ln Bi: parameters, standard errors, RMSE and
// the curves for Temperature. slope is dθ/d(ln Bi) near u, or nil to compute it
// here by a central difference.
func (pr *projector) finish(f *SeriesFit, u float64, slope []float64) {
	if slope == nil {
		const du = 1e-4
		pr.thetaAt(u+du, 1)
		slope = append([]float64(nil), pr.theta...)
		pr.thetaAt(u-du, 1)
		for i, v := range pr.theta {
			slope[i] = (slope[i] - v) / (2 * du)
		}
	}
	m := pr.thetaAt(u, 1)
	th := pr.theta
	amb, exc, ssr := pr.linear(th, 1)
	n := len(th)
	// Jacobian columns: ln Bi, T0, and T∞ when fitted.
	cols := 2
	if math.IsNaN(pr.ambient) {
		cols = 3
	}
	jac := mat.NewDense(n, cols, nil)
	r := make([]float64, n)
	for i := range th {
		jac.Set(i, 0, exc*slope[i])
		jac.Set(i, 1, th[i])
		if cols == 3 {
			jac.Set(i, 2, 1-th[i])
		}
		r[i] = pr.y[i] - amb - exc*th[i]
	}
	f.Cov = covariance(jac, r)
	se := stdErrors(f.Cov, cols)
	bi := math.Exp(u)
	f.Bi = Estimate{bi, bi * se[0]}
	f.H = Estimate{f.Specimen.H(bi), f.Specimen.H(bi * se[0])}
	f.Initial = Estimate{amb + exc, se[1]}
	f.Ambient = Estimate{amb, 0}
	if cols == 3 {
		f.Ambient.StdErr = se[2]
	}
	f.LumpedBi = f.H.Value * f.Specimen.LumpedLength() / f.Specimen.Conductivity
	f.RMSE = math.Sqrt(ssr / float64(n))
	f.Evaluations = pr.evals
	f.minFo = pr.minFo
	f.setModel(m)
}

// setModel sets the model and the curves Temperature and Hottest use.
func (f *SeriesFit) setModel(m seriesModel) {
	f.model = m
	f.centre, f.surface, f.mean = m.curve(Centre), m.curve(Surface), m.curve(VolumeMean)
	f.corner = m.cornerCurve()
}

// Varied returns the fit with its parameters moved by dp, in the order of Cov (ln
// Bi, Initial, Ambient; missing entries count as 0), for numerical derivatives of
// whatever a caller computes from a fit, such as a crossing time. Its Estimates
// keep the moved values and the original standard errors.
func (f *SeriesFit) Varied(dp []float64) (Fit, error) {
	d := make([]float64, 3)
	copy(d, dp)
	g := *f
	g.Initial.Value += d[1]
	g.Ambient.Value += d[2]
	if d[0] != 0 {
		g.Bi.Value *= math.Exp(d[0])
		g.H.Value = g.Specimen.H(g.Bi.Value)
		g.setModel(newSeriesModel(g.Specimen, g.Bi.Value, g.minFo, DefaultTerms, f.model))
	}
	return &g, nil
}

// cornerCurve is θ/θi at the outermost point: every factor at its surface.
func (m seriesModel) cornerCurve() productCurve {
	out := make(productCurve, len(m.parts))
	for i, part := range m.parts {
		out[i] = scaledCurve{c: part.series.At(1), foScale: part.foScale}
	}
	return out
}

// Temperature returns the fitted temperature, °C, at position p and t seconds.
// Below the series' smallest accurate Fo (that of the earliest reading) the error
// grows, first near the surface.
func (f *SeriesFit) Temperature(p Position, t float64) float64 {
	var c productCurve
	switch p {
	case Centre:
		c = f.centre
	case Surface:
		c = f.surface
	case VolumeMean:
		c = f.mean
	default:
		c = f.model.curve(p)
	}
	return f.Ambient.Value + (f.Initial.Value-f.Ambient.Value)*c.theta(f.Specimen.Fo(t))
}

// Hottest returns the temperature of the hottest point at t: the centre while
// cooling, the outermost point (surface, edge or corner) while heating, since the
// solution is monotone from the centre out.
func (f *SeriesFit) Hottest(t float64) float64 {
	c := f.centre
	if f.Initial.Value < f.Ambient.Value {
		c = f.corner
	}
	return f.Ambient.Value + (f.Initial.Value-f.Ambient.Value)*c.theta(f.Specimen.Fo(t))
}

// fmin returns a minimiser of f on [a, b] by Brent's method (golden section with
// parabolic steps), to an absolute tolerance tol.
func fmin(f func(float64) float64, a, b, tol float64) float64 {
	const cgold = 0.3819660112501051
	x := a + cgold*(b-a)
	w, v := x, x
	fx := f(x)
	fw, fv := fx, fx
	d, e := 0.0, 0.0
	for range 100 {
		m := 0.5 * (a + b)
		tol1 := tol + 1e-10*math.Abs(x)
		tol2 := 2 * tol1
		if math.Abs(x-m) <= tol2-0.5*(b-a) {
			break
		}
		golden := true
		if math.Abs(e) > tol1 {
			r := (x - w) * (fx - fv)
			q := (x - v) * (fx - fw)
			p := (x-v)*q - (x-w)*r
			q = 2 * (q - r)
			if q > 0 {
				p = -p
			}
			q = math.Abs(q)
			if math.Abs(p) < math.Abs(0.5*q*e) && p > q*(a-x) && p < q*(b-x) {
				e, d = d, p/q
				golden = false
				if u := x + d; u-a < tol2 || b-u < tol2 {
					d = math.Copysign(tol1, m-x)
				}
			}
		}
		if golden {
			if x >= m {
				e = a - x
			} else {
				e = b - x
			}
			d = cgold * e
		}
		u := x + d
		if math.Abs(d) < tol1 {
			u = x + math.Copysign(tol1, d)
		}
		fu := f(u)
		if fu <= fx {
			if u >= x {
				a = x
			} else {
				b = x
			}
			v, w, x = w, x, u
			fv, fw, fx = fw, fx, fu
			continue
		}
		if u < x {
			a = u
		} else {
			b = u
		}
		switch {
		case fu <= fw || w == x:
			v, w = w, u
			fv, fw = fw, fu
		case fu <= fv || v == x || v == w:
			v, fv = u, fu
		}
	}
	return x
}
