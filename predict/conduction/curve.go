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
func (c Curve) Fill(dst, fo []float64) {
	dst = dst[:len(fo)]
	for i, f := range fo {
		dst[i] = c.Theta(f)
	}
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
