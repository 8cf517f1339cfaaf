package conduction

import "math"

// OneTermMinFo is the Fourier number above which the one-term form is commonly
// taken as accurate (common practice; the error at 0.2 is about 1.5 % at the centre
// for Bi 1 to 10, see the reference values section 2.5).
const OneTermMinFo = 0.2

// OneTerm is the one-term approximation θ/θi ≈ C1·exp(−ζ1²·Fo)·X(ζ1·x*), the cheap
// path for Fo > OneTermMinFo.
type OneTerm struct {
	// Shape is the body.
	Shape Shape
	// Bi is the Biot number (h·L/k or h·r0/k).
	Bi float64
	// Zeta is ζ1, the first eigenvalue.
	Zeta float64
	// C is C1, the first coefficient.
	C float64
}

// NewOneTerm returns the one-term form for shape s at Biot number bi (> 0, +Inf
// allowed).
func NewOneTerm(s Shape, bi float64) OneTerm {
	z := Eigenvalues(s, bi, 1)[0]
	return OneTerm{Shape: s, Bi: bi, Zeta: z, C: coefficient(s, z)}
}

// Theta returns the one-term θ/θi at Fourier number fo and position pos (x/L or
// r/r0). It is not clipped to 1 at small fo, where it overshoots.
func (o OneTerm) Theta(fo, pos float64) float64 {
	return o.C * math.Exp(-o.Zeta*o.Zeta*fo) * shapeFunc(o.Shape, o.Zeta*pos)
}

// MeanTheta returns the one-term volume mean of θ/θi at fo; 1 − MeanTheta is the
// one-term energy fraction Q/Q0.
func (o OneTerm) MeanTheta(fo float64) float64 {
	return o.C * math.Exp(-o.Zeta*o.Zeta*fo) * meanFactor(o.Shape, o.Zeta)
}

// FoAt returns the Fourier number at which the one-term θ/θi at pos reaches theta:
// Fo = −ln(θ/(C1·X(ζ1·pos)))/ζ1². Check the result against OneTermMinFo.
func (o OneTerm) FoAt(theta, pos float64) float64 {
	return -math.Log(theta/(o.C*shapeFunc(o.Shape, o.Zeta*pos))) / (o.Zeta * o.Zeta)
}
