package predict

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mat"
)

// projection evaluates the variable-projection objective of a LumpedProblem: for a
// given τ it solves the linear parameters by least squares and returns the residual
// sum of squares. Its matrices are reused across evaluations.
type projection struct {
	p     *LumpedProblem
	y     []float64 // readings, minus the ambient when it is known
	e     []float64 // exp(−t/τ) at the last τ solved
	tau   float64   // the τ of e
	a     *mat.Dense
	rhs   *mat.VecDense
	x     *mat.VecDense
	qr    mat.QR
	evals int
}

func newProjection(p *LumpedProblem) *projection {
	n := len(p.Times)
	v := &projection{p: p, y: make([]float64, n), e: make([]float64, n), tau: math.NaN()}
	for i, c := range p.Celsius {
		v.y[i] = c
		if p.Ambient != nil {
			v.y[i] -= p.Ambient[i]
		}
	}
	if k := p.free() - 1; k > 0 {
		v.a = mat.NewDense(n, k, nil)
		v.rhs = mat.NewVecDense(n, v.y)
		v.x = mat.NewVecDense(k, nil)
	}
	return v
}

// solve returns the linear parameters for τ (the ambient is 0 when it is known, as y
// already excludes it) and the residual sum of squares.
func (v *projection) solve(tau float64) (amb, exc, ssr float64) {
	v.evals++
	v.decay(tau)
	switch v.p.free() {
	case 1:
		exc = v.p.Excess
	case 2:
		for i, e := range v.e {
			v.a.Set(i, 0, e)
		}
		if !v.lstsq() {
			return 0, 0, math.Inf(1)
		}
		exc = v.x.AtVec(0)
	case 3:
		for i, e := range v.e {
			v.a.Set(i, 0, 1)
			v.a.Set(i, 1, e)
		}
		if !v.lstsq() {
			return 0, 0, math.Inf(1)
		}
		amb, exc = v.x.AtVec(0), v.x.AtVec(1)
	}
	for i, y := range v.y {
		r := y - amb - exc*v.e[i]
		ssr += r * r
	}
	return amb, exc, ssr
}

// decay fills v.e with exp(−t/τ) unless it already holds it.
func (v *projection) decay(tau float64) {
	if tau == v.tau {
		return
	}
	for i, t := range v.p.Times {
		v.e[i] = math.Exp(-t / tau)
	}
	v.tau = tau
}

// lstsq solves a·x ≈ rhs; an ill-conditioned but solved system counts as solved.
func (v *projection) lstsq() bool {
	v.qr.Factorize(v.a)
	err := v.qr.SolveVecTo(v.x, false, v.rhs)
	var c mat.Condition
	return err == nil || errors.As(err, &c)
}

// residuals writes y − amb − exc·exp(−t/τ) into dst (allocated when nil).
func (v *projection) residuals(amb, exc, tau float64, dst []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(v.y))
	}
	v.decay(tau)
	for i, y := range v.y {
		dst[i] = y - amb - exc*v.e[i]
	}
	return dst
}

// search returns the τ minimising the projected residual sum of squares within
// [TauMin, TauMax]; ok is false when the grid minimum sits at an end of the range.
func (v *projection) search(s LumpedSettings) (tau float64, ok bool) {
	lo, hi := math.Log(s.TauMin), math.Log(s.TauMax)
	steps := max(2, int(math.Ceil((hi-lo)/math.Ln10*float64(s.GridPerDecade))))
	best, bestSSR := 0, math.Inf(1)
	for i := 0; i <= steps; i++ {
		u := lo + (hi-lo)*float64(i)/float64(steps)
		if _, _, ssr := v.solve(math.Exp(u)); ssr < bestSSR {
			best, bestSSR = i, ssr
		}
	}
	at := func(i int) float64 { return lo + (hi-lo)*float64(i)/float64(steps) }
	if best == 0 || best == steps {
		return math.Exp(at(best)), false
	}
	u := v.golden(at(best-1), at(best+1), s.TauTol)
	return math.Exp(u), true
}

// golden minimises the objective over u = ln τ in [a, b] by golden-section search to
// an absolute tolerance tol in u (a relative tolerance in τ).
func (v *projection) golden(a, b, tol float64) float64 {
	const r = 0.6180339887498949 // (√5 − 1)/2
	f := func(u float64) float64 { _, _, ssr := v.solve(math.Exp(u)); return ssr }
	c, d := b-r*(b-a), a+r*(b-a)
	fc, fd := f(c), f(d)
	for b-a > tol {
		if fc < fd {
			b, d, fd = d, c, fc
			c = b - r*(b-a)
			fc = f(c)
		} else {
			a, c, fc = c, d, fd
			d = a + r*(b-a)
			fd = f(d)
		}
	}
	return (a + b) / 2
}
