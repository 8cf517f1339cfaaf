package conduction

import "math"

// DefaultTerms is the number of series terms NewSeries keeps when asked for 0.
// With it, MinFo is about 4e-5 for every shape and Bi.
const DefaultTerms = 300

// cutoff is the exponent beyond which a term is dropped: a term is summed while
// (ζn² − ζ1²)·Fo <= cutoff, i.e. while it is at least e^−36 ≈ 2.3e-16 of the first.
const cutoff = 36.0

// Series is the exact series solution for one shape at one Biot number, with the
// eigenvalues, coefficients and mean-value weights precomputed. It is immutable and
// safe for concurrent use.
type Series struct {
	shape Shape
	bi    float64
	zeta  []float64 // ζn
	zeta2 []float64 // ζn²
	coef  []float64 // Cn
	mean  []float64 // Cn times the volume mean of X(ζn·x*)
}

// NewSeries returns the series for shape s at Biot number bi (h·L/k for Slab,
// h·r0/k for Cylinder and Sphere; +Inf for a fixed surface temperature) with at
// most terms terms (0 or less: DefaultTerms). Use TermsFor to size it for the
// smallest Fo you will evaluate. It panics if bi is not > 0.
func NewSeries(s Shape, bi float64, terms int) *Series {
	return newSeriesFrom(s, bi, terms, nil)
}

// newSeriesFrom is NewSeries with the series of a nearby Biot number (nil: none)
// to start the root search from (eigenvaluesFrom).
func newSeriesFrom(s Shape, bi float64, terms int, near *Series) *Series {
	if terms <= 0 {
		terms = DefaultTerms
	}
	var guess []float64
	if near != nil && near.shape == s {
		guess = near.zeta
	}
	zeta := eigenvaluesFrom(s, bi, terms, guess)
	se := &Series{
		shape: s,
		bi:    bi,
		zeta:  zeta,
		zeta2: make([]float64, terms),
		coef:  make([]float64, terms),
		mean:  make([]float64, terms),
	}
	for i, z := range zeta {
		se.zeta2[i] = z * z
		se.coef[i] = coefficient(s, z)
		se.mean[i] = se.coef[i] * meanFactor(s, z)
	}
	return se
}

// TermsFor returns the number of terms a Series needs to be accurate (to about
// 1e-15 of θi) down to Fourier number minFo. It uses ζn >= (n−1)π, true for all
// three shapes.
func TermsFor(minFo float64) int {
	if !(minFo > 0) {
		return DefaultTerms
	}
	n := math.Ceil(math.Sqrt(cutoff/minFo+math.Pi*math.Pi)/math.Pi) + 2
	return int(math.Min(n, 1e6))
}

// Shape returns the series' shape.
func (s *Series) Shape() Shape { return s.shape }

// Bi returns the series' Biot number.
func (s *Series) Bi() float64 { return s.bi }

// Terms returns the number of terms held.
func (s *Series) Terms() int { return len(s.zeta) }

// Zeta returns ζn, n from 1 (a copy).
func (s *Series) Zeta() []float64 { return append([]float64(nil), s.zeta...) }

// Coefficients returns Cn, n from 1 (a copy).
func (s *Series) Coefficients() []float64 { return append([]float64(nil), s.coef...) }

// MinFo returns the smallest Fourier number at which every dropped term is below
// e^−36 of the first; below it the sum uses all held terms and the error grows
// (first near the surface) like exp(−ζN²·Fo).
func (s *Series) MinFo() float64 {
	n := len(s.zeta) - 1
	if n == 0 {
		return math.Inf(1)
	}
	return cutoff / (s.zeta2[n] - s.zeta2[0])
}

// Theta returns θ/θi at Fourier number fo and position pos (x/L or r/r0 in [0, 1];
// 0 is the centre, 1 the surface). At fo <= 0 it returns 1, the initial condition.
func (s *Series) Theta(fo, pos float64) float64 {
	if fo <= 0 {
		return 1
	}
	sum := 0.0
	for i, z2 := range s.zeta2 {
		if i > 0 && (z2-s.zeta2[0])*fo > cutoff {
			break
		}
		sum += s.coef[i] * math.Exp(-z2*fo) * shapeFunc(s.shape, s.zeta[i]*pos)
	}
	return sum
}

// MeanTheta returns the volume mean of θ/θi at Fourier number fo; 1 − MeanTheta is
// the fraction Q/Q0 of the initial excess energy that has left the body.
func (s *Series) MeanTheta(fo float64) float64 {
	if fo <= 0 {
		return 1
	}
	return sumExp(s.mean, s.zeta2, fo)
}

// At returns the curve θ/θi(Fo) at fixed position pos, with X(ζn·pos) precomputed.
func (s *Series) At(pos float64) Curve {
	a := make([]float64, len(s.coef))
	for i, c := range s.coef {
		a[i] = c * shapeFunc(s.shape, s.zeta[i]*pos)
	}
	return Curve{a: a, zeta2: s.zeta2}
}

// Mean returns the curve of the volume-mean θ/θi against Fo.
func (s *Series) Mean() Curve { return Curve{a: s.mean, zeta2: s.zeta2} }

// sumExp returns Σ a_n·exp(−z2_n·fo) over the terms that matter at fo.
func sumExp(a, z2 []float64, fo float64) float64 {
	sum := 0.0
	for i, w := range z2 {
		if i > 0 && (w-z2[0])*fo > cutoff {
			break
		}
		sum += a[i] * math.Exp(-w*fo)
	}
	return sum
}

// coefficient returns Cn for root z.
func coefficient(s Shape, z float64) float64 {
	switch s {
	case Cylinder:
		j0, j1 := math.J0(z), math.J1(z)
		return 2 / z * j1 / (j0*j0 + j1*j1)
	case Sphere:
		return 4 * sinMinusZCos(z) / twoZMinusSin2Z(z)
	}
	return 4 * math.Sin(z) / (2*z + math.Sin(2*z))
}

// meanFactor returns the volume mean of X(z·x*) over the body.
func meanFactor(s Shape, z float64) float64 {
	switch s {
	case Cylinder:
		return 2 * math.J1(z) / z
	case Sphere:
		return 3 * sinMinusZCos(z) / (z * z * z)
	}
	return sinc(z)
}

// shapeFunc is X: cos (slab), J0 (cylinder), sin(z)/z (sphere).
func shapeFunc(s Shape, z float64) float64 {
	switch s {
	case Cylinder:
		return math.J0(z)
	case Sphere:
		return sinc(z)
	}
	return math.Cos(z)
}

// sinMinusZCos returns sin z − z·cos z without cancellation at small z.
func sinMinusZCos(z float64) float64 {
	if math.Abs(z) < 0.1 {
		z2 := z * z
		return z * z2 * (1.0/3 - z2*(1.0/30-z2*(1.0/840-z2/45360)))
	}
	return math.Sin(z) - z*math.Cos(z)
}

// twoZMinusSin2Z returns 2z − sin 2z without cancellation at small z.
func twoZMinusSin2Z(z float64) float64 {
	if math.Abs(z) < 0.1 {
		w := 2 * z
		w2 := w * w
		return w * w2 * (1.0/6 - w2*(1.0/120-w2*(1.0/5040-w2/362880)))
	}
	return 2*z - math.Sin(2*z)
}
