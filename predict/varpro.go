package predict

import (
	"math"
	"sort"
	"sync"
)

// projection evaluates the variable-projection objective of a LumpedProblem: for a
// given τ the linear parameters (ambient and θi, or θi alone) have a closed form from
// a few sums, so an evaluation is one pass to fill exp(−t/τ) and one pass for the
// sums — no matrix is built. The sums are taken about the means (centred data), which
// keeps the 2×2 normal equations of the constant-plus-exponential case well
// conditioned: the centred form is the Schur complement of the constant column and
// never subtracts two large, nearly equal totals.
type projection struct {
	p       *LumpedProblem
	buf     []float64 // backing store of y, e and yc
	y       []float64 // readings, minus the ambient when it is known
	yc      []float64 // y minus its mean (fitted ambient only)
	syy     float64   // Σ yc² (fitted ambient) or Σ y² (measured ambient)
	ybar    float64   // mean of y
	tbar    float64   // mean of the times
	step    float64   // the common spacing of the times, 0 when they are not equally spaced
	e       []float64 // exp(−t/τ) at the last τ filled
	tau     float64   // the τ of e
	last    projected // the latest evaluation, at lastTau
	lastTau float64
	evals   int
}

// projected is the outcome of one evaluation at a τ.
type projected struct {
	amb, exc float64 // the linear parameters (amb is 0 when the ambient is known)
	ssr      float64 // residual sum of squares
	slope    float64 // d ssr / d ln τ at the linear optimum
	curv     float64 // Gauss–Newton approximation of d² ssr / d ln τ² (Kaufman 1975)
	// jtj is JᵀJ of the full problem at τ and the linear optimum, in the order
	// ambient, excess, tau (Jacobian columns 1, e and θi·e·t/τ²), from the same sums;
	// entries of given parameters are zero. The covariance at the optimum uses it.
	jtj [3][3]float64
}

// buffers recycles the projection's work slices between fits, so a tracker refitting
// every few seconds does not allocate three slices of its segment length each time.
var buffers sync.Pool

// newProjection prepares the objective of p. Call release when done with it.
func newProjection(p *LumpedProblem) *projection {
	n := len(p.Times)
	var buf []float64
	if b, ok := buffers.Get().(*[]float64); ok && cap(*b) >= 3*n {
		buf = (*b)[:3*n]
	} else {
		buf = make([]float64, 3*n)
	}
	v := &projection{p: p, buf: buf, y: buf[:n:n], e: buf[n : 2*n : 2*n], yc: buf[2*n:], tau: math.NaN(), lastTau: math.NaN()}
	copy(v.y, p.Celsius)
	if p.Ambient != nil {
		for i, a := range p.Ambient {
			v.y[i] -= a
		}
	}
	v.ybar = mean(v.y)
	v.tbar, v.step = spacing(p.Times)
	switch p.free() {
	case 3:
		yc := v.yc[:n]
		for i, y := range v.y {
			yc[i] = y - v.ybar
		}
		v.syy = sumSquares(yc)
	case 2:
		v.syy = sumSquares(v.y)
	}
	return v
}

// sumSquares returns Σ x² in four interleaved partial sums: a single running sum
// waits on each addition in turn.
func sumSquares(xs []float64) float64 {
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(xs); i += 4 {
		a, b, c, d := xs[i], xs[i+1], xs[i+2], xs[i+3]
		s0, s1, s2, s3 = s0+a*a, s1+b*b, s2+c*c, s3+d*d
	}
	for ; i < len(xs); i++ {
		s0 += xs[i] * xs[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// release hands the work slices back for reuse; v must not be used afterwards.
func (v *projection) release() {
	buf := v.buf
	buffers.Put(&buf)
	v.buf, v.y, v.e, v.yc = nil, nil, nil, nil
}

// solve returns the linear parameters for τ and the residual sum of squares.
func (v *projection) solve(tau float64) (amb, exc, ssr float64) {
	r := v.eval(tau)
	return r.amb, r.exc, r.ssr
}

// eval solves the linear parameters at τ in closed form and returns them with the
// residual sum of squares and its derivative in ln τ. By the variable-projection
// theorem (Golub & Pereyra 1973) the derivative of the projected objective is the
// partial derivative in τ with the linear parameters held at their optimum:
// d ssr/d ln τ = −2·θi·Σ rᵢ·eᵢ·tᵢ/τ.
func (v *projection) eval(tau float64) projected {
	if tau == v.lastTau {
		return v.last
	}
	v.evals++
	v.decay(tau)
	switch v.p.free() {
	case 3:
		v.last = v.evalAmbient(tau)
	case 2:
		v.last = v.evalExcess(tau)
	default:
		v.last = v.evalFixed(tau)
	}
	v.lastTau = tau
	return v.last
}

// evalAmbient: constant ambient and θi fitted (centred 2×2 normal equations). The
// decay values are taken about K = exp(−t̄/τ), which is close to their
// mean, so the shifted sums lose no precision, and the readings are centred once in
// newProjection.
func (v *projection) evalAmbient(tau float64) projected {
	k := math.Exp(-v.tbar / tau)
	var s1, s2, sdy, set, seet, syet, seett float64
	es := v.e
	ts, yc := v.p.Times[:len(es)], v.yc[:len(es)]
	for i, e := range es {
		t, y := ts[i], yc[i]
		d := e - k
		s1 += d
		s2 += d * d
		sdy += d * y
		et := e * t
		set += et
		seet += e * et
		syet += y * et
		seett += et * et
	}
	n := float64(len(v.y))
	sxx := s2 - s1*s1/n
	if !(sxx > 0) {
		return projected{amb: v.ybar, ssr: v.syy}
	}
	ebar := k + s1/n
	b := sdy / sxx
	// ∂e/∂ln τ = e·t/τ projected off the columns 1 and e, for the Gauss–Newton curvature.
	cross := seet - ebar*set
	perp := seett - set*set/n - cross*cross/sxx
	se, see, c := s1+n*k, s2+2*k*s1+n*k*k, b/(tau*tau)
	return projected{
		amb:   v.ybar - b*ebar,
		exc:   b,
		ssr:   max(v.syy-b*sdy, 0),
		slope: -2 * b * (syet - b*cross) / tau,
		curv:  2 * b * b * perp / (tau * tau),
		jtj:   [3][3]float64{{n, se, c * set}, {se, see, c * seet}, {c * set, c * seet, c * c * seett}},
	}
}

// evalExcess: ambient known, θi fitted (1×1 normal equation).
func (v *projection) evalExcess(tau float64) projected {
	var see, sey, syt, set, sett float64
	for i, e := range v.e {
		t := v.p.Times[i]
		et := e * t
		see += e * e
		sey += e * v.y[i]
		syt += v.y[i] * et
		set += e * et
		sett += et * et
	}
	if !(see > 0) {
		return projected{ssr: v.syy}
	}
	b := sey / see
	perp := sett - set*set/see
	c := b / (tau * tau)
	return projected{
		exc:   b,
		ssr:   max(v.syy-b*sey, 0),
		slope: -2 * b * (syt - b*set) / tau,
		curv:  2 * b * b * perp / (tau * tau),
		jtj:   [3][3]float64{1: {1: see, 2: c * set}, 2: {1: c * set, 2: c * c * sett}},
	}
}

// evalFixed: ambient and θi given, τ alone fitted.
func (v *projection) evalFixed(tau float64) projected {
	b := v.p.Excess
	var ssr, s, sett float64
	for i, e := range v.e {
		et := e * v.p.Times[i]
		r := v.y[i] - b*e
		ssr += r * r
		s += r * et
		sett += et * et
	}
	c := b / (tau * tau)
	return projected{exc: b, ssr: ssr, slope: -2 * b * s / tau, curv: 2 * b * b * sett / (tau * tau),
		jtj: [3][3]float64{2: {2: c * c * sett}}}
}

// resync is how many readings share one exp(−t/τ) when the times are equally
// spaced: the block's first chains readings are that value times q, q², …, and each
// later one is the reading chains before times q^chains, so no factor carries more
// than about resync/chains + chains roundings (a few 1e-15 relative;
// TestDecayMatchesExp holds them to 1e-14). The chains running products stay in
// registers.
const (
	resync = 128
	chains = 8
)

// spacing returns the mean of ts and their common spacing, or 0 for the spacing when
// successive differences vary by more than 1e-9 relative (beyond rounding of the times).
func spacing(ts []float64) (avg, step float64) {
	n := len(ts)
	if n < 2 {
		return mean(ts), 0
	}
	step = (ts[n-1] - ts[0]) / float64(n-1)
	tol := 1e-9 * step
	for i := 1; i < n; i++ {
		if math.Abs(ts[i]-ts[i-1]-step) > tol {
			return mean(ts), 0
		}
	}
	// Equally spaced: the midpoint is the mean (within the spacing's tolerance), all
	// evalAmbient's centring needs.
	return (ts[0] + ts[n-1]) / 2, step
}

// decay fills v.e with exp(−t/τ) unless it already holds it. Equally spaced readings
// (the usual case) take one exp per block of resync readings and a multiplication per
// reading (see resync); other readings get one exp each.
func (v *projection) decay(tau float64) {
	if tau == v.tau {
		return
	}
	v.tau = tau
	ts, e := v.p.Times, v.e[:len(v.p.Times)]
	if v.step == 0 || len(ts) < 2*chains {
		for i, t := range ts {
			e[i] = math.Exp(-t / tau)
		}
		return
	}
	var qs [chains]float64 // q⁰ … q⁷
	qs[0] = 1
	q := math.Exp(-v.step / tau)
	for j := 1; j < chains; j++ {
		qs[j] = qs[j-1] * q
	}
	q8 := math.Exp(-chains * v.step / tau)
	for i := 0; i < len(ts); i += resync {
		blk := e[i:min(i+resync, len(ts))]
		e0 := math.Exp(-ts[i] / tau)
		for j := range min(chains, len(blk)) {
			blk[j] = e0 * qs[j]
		}
		j := chains
		if len(blk) >= 2*chains {
			// The products stay in registers (a chain through memory waits on each
			// store); written out for chains = 8.
			a, b, c, d := blk[0], blk[1], blk[2], blk[3]
			f, g, h, k := blk[4], blk[5], blk[6], blk[7]
			for ; j+chains <= len(blk); j += chains {
				a, b, c, d = a*q8, b*q8, c*q8, d*q8
				f, g, h, k = f*q8, g*q8, h*q8, k*q8
				x := blk[j : j+chains : j+chains]
				x[0], x[1], x[2], x[3], x[4], x[5], x[6], x[7] = a, b, c, d, f, g, h, k
			}
		}
		for ; j < len(blk); j++ {
			blk[j] = blk[j-chains] * q8
		}
	}
}

// search returns the τ minimising the projected residual sum of squares within
// [TauMin, TauMax]; ok is false when the minimum sits at an end of the range.
//
// It starts from a guess from the data (guess) and takes Gauss–Newton steps in ln τ
// (newton). Should those not converge, it walks from the guess in ln τ until the objective's
// derivative changes sign, and refines that bracket by regula falsi (Illinois
// variant). When there is no guess or the walk leaves the range, a grid in ln τ
// brackets the minimum instead.
func (v *projection) search(s LumpedSettings) (tau float64, ok bool) {
	lo, hi := math.Log(s.TauMin), math.Log(s.TauMax)
	if u0, good := v.guess(); good && u0 > lo && u0 < hi {
		if u, ok := v.newton(u0, lo, hi, s.TauTol); ok {
			return math.Exp(u), true
		}
		if br, found := v.walk(u0, lo, hi); found {
			if u, ok := v.illinois(br, s.TauTol); ok {
				return math.Exp(u), true
			}
		}
	}
	return v.grid(lo, hi, s)
}

// guess estimates ln τ from the means of three equal time windows: for an exponential
// sampled evenly, successive differences of the window means fall by exp(−w/τ) for
// windows of width w, whatever the (constant) ambient. ok is false when the data do
// not decay monotonically.
func (v *projection) guess() (float64, bool) {
	ts := v.p.Times
	n := len(ts)
	if n < 6 {
		return 0, false
	}
	w := (ts[n-1] - ts[0]) / 3
	i1 := sort.SearchFloat64s(ts, ts[0]+w)
	i2 := sort.SearchFloat64s(ts, ts[0]+2*w)
	if i1 == 0 || i2 == i1 || i2 == n {
		return 0, false
	}
	m0, m1, m2 := mean(v.y[:i1]), mean(v.y[i1:i2]), mean(v.y[i2:])
	ratio := (m1 - m2) / (m0 - m1)
	if !(ratio > 0 && ratio < 1) {
		return 0, false
	}
	return math.Log(-w / math.Log(ratio)), true
}

// mean returns the mean of xs (0 when empty), summed in four interleaved parts as in
// sumSquares.
func mean(xs []float64) float64 {
	if len(xs) == 0 {
		return 0
	}
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(xs); i += 4 {
		s0, s1, s2, s3 = s0+xs[i], s1+xs[i+1], s2+xs[i+2], s3+xs[i+3]
	}
	for ; i < len(xs); i++ {
		s0 += xs[i]
	}
	return ((s0 + s1) + (s2 + s3)) / float64(len(xs))
}

// maxNewton bounds the Gauss–Newton steps; from a good guess a small-residual fit
// converges in two or three.
const maxNewton = 8

// newton takes Gauss–Newton steps on the projected objective in u = ln τ from u0
// (each step at most 0.5 in u) until a step is under tol; ok is false when it has not
// converged within maxNewton steps, leaves (lo, hi), or the objective's curvature is
// not positive.
func (v *projection) newton(u0, lo, hi, tol float64) (float64, bool) {
	u := u0
	for range maxNewton {
		r := v.eval(math.Exp(u))
		if !(r.curv > 0) {
			return 0, false
		}
		du := max(-0.5, min(-r.slope/r.curv, 0.5))
		if math.Abs(du) <= tol {
			return u, true // within tol of the next step: keep the evaluated point
		}
		u += du
		if !(u > lo && u < hi) {
			return 0, false
		}
	}
	return 0, false
}

// bracket is an interval [a, b] in u = ln τ with the objective's derivative fa < 0
// at a and fb > 0 at b.
type bracket struct{ a, b, fa, fb float64 }

// firstStep is the walk's first step in ln τ: the guess is usually within a few
// per cent, and the step doubles until the bracket is found.
const firstStep = 0.02

// walk steps from u0 in ln τ, doubling the step, until the objective's derivative goes
// from negative to positive, and returns that bracket; found is false when the walk
// reaches lo or hi first.
func (v *projection) walk(u0, lo, hi float64) (bracket, bool) {
	f := v.eval(math.Exp(u0)).slope
	step := firstStep
	if f > 0 {
		step = -step
	}
	u := u0
	for range 40 {
		next := u + step
		if next <= lo || next >= hi {
			return bracket{}, false
		}
		fn := v.eval(math.Exp(next)).slope
		switch {
		case step > 0 && f < 0 && fn > 0:
			return bracket{u, next, f, fn}, true
		case step < 0 && fn < 0 && f > 0:
			return bracket{next, u, fn, f}, true
		}
		u, f, step = next, fn, 2*step
	}
	return bracket{}, false
}

// grid brackets the minimum on a grid in ln τ over [lo, hi] and refines it; ok is
// false when the grid minimum sits at an end of the range.
func (v *projection) grid(lo, hi float64, s LumpedSettings) (tau float64, ok bool) {
	steps := max(2, int(math.Ceil((hi-lo)/math.Ln10*float64(s.GridPerDecade))))
	at := func(i int) float64 { return lo + (hi-lo)*float64(i)/float64(steps) }
	best, bestSSR := 0, math.Inf(1)
	for i := 0; i <= steps; i++ {
		if r := v.eval(math.Exp(at(i))); r.ssr < bestSSR {
			best, bestSSR = i, r.ssr
		}
	}
	if best == 0 || best == steps {
		return math.Exp(at(best)), false
	}
	a, b := at(best-1), at(best+1)
	br := bracket{a, b, v.eval(math.Exp(a)).slope, v.eval(math.Exp(b)).slope}
	if u, ok := v.illinois(br, s.TauTol); ok {
		return math.Exp(u), true
	}
	return math.Exp(v.golden(a, b, s.TauTol)), true
}

// illinois finds the root of the objective's derivative in u = ln τ within the
// bracket to an absolute tolerance tol in u; ok is false when the derivative does not
// go from negative to positive across the bracket.
func (v *projection) illinois(br bracket, tol float64) (float64, bool) {
	a, b, fa, fb := br.a, br.b, br.fa, br.fb
	if !(fa < 0 && fb > 0) {
		return 0, false
	}
	side, prev := 0, math.NaN()
	for range 200 {
		c := (a*fb - b*fa) / (fb - fa)
		if !(c > a && c < b) {
			c = (a + b) / 2
		}
		fc := v.eval(math.Exp(c)).slope
		switch {
		case fc == 0:
			return c, true
		case fc < 0:
			a, fa = c, fc
			if side == -1 {
				fb /= 2
			}
			side = -1
		default:
			b, fb = c, fc
			if side == 1 {
				fa /= 2
			}
			side = 1
		}
		if b-a <= tol || math.Abs(c-prev) <= tol/8 {
			return c, true
		}
		prev = c
	}
	return (a + b) / 2, true
}

// golden minimises the objective over u = ln τ in [a, b] by golden-section search to
// an absolute tolerance tol in u (a relative tolerance in τ).
func (v *projection) golden(a, b, tol float64) float64 {
	const r = 0.6180339887498949 // (√5 − 1)/2
	f := func(u float64) float64 { return v.eval(math.Exp(u)).ssr }
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
