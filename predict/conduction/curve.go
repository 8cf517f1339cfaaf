package conduction

import "math"

// Curve is θ/θi against Fo at one fixed position (or the volume mean) of a Series:
// Σ an·exp(−ζn²·Fo) with the an precomputed, so evaluating it costs a few
// exponentials per point. Obtain one from Series.At or Series.Mean. The zero Curve
// is not usable.
type Curve struct {
	a     []float64
	zeta2 []float64
}

// Theta returns θ/θi at Fourier number fo (1 at fo <= 0, the initial condition).
func (c Curve) Theta(fo float64) float64 {
	if fo <= 0 {
		return 1
	}
	return sumExp(c.a, c.zeta2, fo)
}

// Fill sets dst[i] = c.Theta(fo[i]) for every i; dst must be at least as long as fo.
// Over ascending, evenly spaced fo (a logger's fixed interval) it steps each term's
// exponential by a constant factor instead of calling exp (see filler), to within
// about 1e-12 of θi; elsewhere it evaluates each point directly.
func (c Curve) Fill(dst, fo []float64) {
	dst = dst[:len(fo)]
	fl := filler{c: c, e: make([]float64, len(c.a)), r: make([]float64, len(c.a))}
	for i, f := range fo {
		dst[i] = fl.next(f)
	}
}

// Exact restarts of the recurrence: every refresh points, so rounding errors
// cannot build up, and whenever a step differs from the last by more than
// stepTol of the Fourier number (the step factor then no longer applies).
const (
	refresh = 64
	stepTol = 1e-13
)

// filler evaluates a Curve at successive Fourier numbers. While they rise by equal
// steps Δ, each term's exp(−ζn²·Fo) is the previous one times exp(−ζn²·Δ); the
// terms kept only fall as Fo rises.
type filler struct {
	c          Curve
	e, r       []float64 // exp(−ζn²·prev) for n < live; exp(−ζn²·rStep)
	live       int       // terms held in e, 0: none
	prev, last float64   // the previous Fo and the step that led to it
	rStep      float64   // the step r is for, 0: none
	rLive      int       // terms held in r
	since      int       // recurrence steps since the last exact evaluation
}

// next returns θ/θi at fo.
func (fl *filler) next(fo float64) float64 {
	if fo <= 0 {
		fl.live = 0
		return 1
	}
	z2 := fl.c.zeta2
	n := 1
	for n < len(z2) && (z2[n]-z2[0])*fo <= cutoff {
		n++
	}
	d := fo - fl.prev
	tol := stepTol * fo
	switch {
	case fl.live == 0 || d <= 0 || n > fl.live || fl.since >= refresh || math.Abs(d-fl.last) > tol:
		for k := range n {
			fl.e[k] = math.Exp(-z2[k] * fo)
		}
		fl.since = 0
	default:
		if math.Abs(d-fl.rStep) > tol || n > fl.rLive {
			for k := range n {
				fl.r[k] = math.Exp(-z2[k] * d)
			}
			fl.rStep, fl.rLive = d, n
		}
		for k := range n {
			fl.e[k] *= fl.r[k]
		}
		fl.since++
	}
	fl.live, fl.last, fl.prev = n, d, fo
	sum := 0.0
	for k := range n {
		sum += fl.c.a[k] * fl.e[k]
	}
	return sum
}

// FoAt returns the Fourier number at which the curve falls to theta (θ/θi): 0 for
// theta >= 1, +Inf for theta <= 0. The curve falls monotonically (constant h,
// uniform initial excess), so the root is unique.
func (c Curve) FoAt(theta float64) float64 {
	switch {
	case theta >= 1:
		return 0
	case !(theta > 0):
		return math.Inf(1)
	}
	g := func(fo float64) float64 { return c.Theta(fo) - theta }
	hi := 0.2
	for g(hi) > 0 {
		hi *= 2
		if math.IsInf(hi, 1) {
			return hi
		}
	}
	return brent(g, 0, hi)
}
