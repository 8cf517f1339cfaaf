package conduction

import (
	"fmt"
	"math"
	"sync"
)

// Eigenvalues returns the first n positive roots ζ1 < ζ2 < … of the shape's
// eigenvalue equation at Biot number bi (h·L/k or h·r0/k):
//
//	Slab:     ζ·tan ζ = Bi,            root n in ((n−1)π, (n−½)π)
//	Cylinder: ζ·J1(ζ)/J0(ζ) = Bi,      root n in (j1,n−1, j0,n), j1,0 = 0
//	Sphere:   1 − ζ·cot ζ = Bi,        root n in ((n−1)π, nπ)
//
// Each root is bracketed in its own interval and solved with Brent's method on a
// pole-free form (z·sin z − Bi·cos z; z·J1(z) − Bi·J0(z); cos z + (Bi−1)·sin z/z),
// to a relative accuracy of a few ulps. bi = +Inf gives the fixed-surface-temperature
// limits (the upper ends of the intervals). It panics if bi is not > 0 or the shape
// is unknown (misuse, not a runtime condition).
func Eigenvalues(s Shape, bi float64, n int) []float64 {
	s.check()
	checkBi(bi)
	z := make([]float64, n)
	for i := range z {
		z[i] = eigenvalue(s, bi, i+1)
	}
	return z
}

// eigenvaluesFrom is Eigenvalues with the roots guess of a nearby Biot number as
// starting points, as a fitter trying Bi after Bi has them: each root by a
// safeguarded Newton iteration from its guess (a few steps instead of Brent's ten
// or so), falling back to Brent in the bracket when Newton leaves the bracket or
// does not settle. A Newton root inside the n-th bracket is the n-th root, since
// each bracket holds exactly one.
func eigenvaluesFrom(s Shape, bi float64, n int, guess []float64) []float64 {
	s.check()
	checkBi(bi)
	z := make([]float64, n)
	for i := range z {
		if i < len(guess) && !math.IsInf(bi, 1) {
			if r, ok := newtonRoot(s, bi, i+1, guess[i]); ok {
				z[i] = r
				continue
			}
		}
		z[i] = eigenvalue(s, bi, i+1)
	}
	return z
}

// newtonRoot refines z toward the n-th root by Newton's method on a smooth form of
// the eigenvalue equation; ok is false when an iterate leaves the root's bracket or
// the steps do not fall below a few ulps within 8 iterations.
func newtonRoot(s Shape, bi float64, n int, z float64) (float64, bool) {
	if s == Sphere && n == 1 {
		return 0, false // z·cos z + (Bi−1)·sin z also vanishes at 0
	}
	lo, hi := bracket(s, n)
	for range 8 {
		f, df := newtonForm(s, bi, z)
		if !(df != 0) {
			return 0, false
		}
		step := f / df
		z -= step
		if !(z > lo && z < hi) {
			return 0, false
		}
		if math.Abs(step) <= 4*0x1p-52*z {
			return z, true
		}
	}
	return 0, false
}

// newtonForm returns a function whose roots in each bracket are the eigenvalues,
// and its derivative: z·sin z − Bi·cos z (slab), z·J1(z) − Bi·J0(z) (cylinder),
// z·cos z + (Bi−1)·sin z (sphere, z > 0).
func newtonForm(s Shape, bi, z float64) (f, df float64) {
	switch s {
	case Cylinder:
		j0, j1 := math.J0(z), math.J1(z)
		return z*j1 - bi*j0, z*j0 + bi*j1
	case Sphere:
		sn, cs := math.Sincos(z)
		return z*cs + (bi-1)*sn, bi*cs - z*sn
	}
	sn, cs := math.Sincos(z)
	return z*sn - bi*cs, sn + z*cs + bi*sn
}

func checkBi(bi float64) {
	if !(bi > 0) {
		panic(fmt.Sprintf("conduction: Biot number must be > 0, got %g", bi))
	}
}

// eigenvalue returns the n-th root (n >= 1).
func eigenvalue(s Shape, bi float64, n int) float64 {
	lo, hi := bracket(s, n)
	if math.IsInf(bi, 1) {
		return hi
	}
	return brent(func(z float64) float64 { return characteristic(s, bi, z) }, lo, hi)
}

// characteristic is the pole-free form of the eigenvalue equation; it changes sign
// exactly once inside each bracket.
func characteristic(s Shape, bi, z float64) float64 {
	switch s {
	case Cylinder:
		return z*math.J1(z) - bi*math.J0(z)
	case Sphere:
		// (z·cos z + (Bi−1)·sin z)/z = Bi·sin z/z − (sin z − z·cos z)/z, written so
		// that small roots (small Bi) suffer no cancellation; it equals Bi at z = 0.
		if z == 0 {
			return bi
		}
		return bi*sinc(z) - sinMinusZCos(z)/z
	}
	return z*math.Sin(z) - bi*math.Cos(z)
}

// bracket returns the interval that holds the n-th root at any finite Bi > 0.
func bracket(s Shape, n int) (lo, hi float64) {
	k := float64(n)
	switch s {
	case Cylinder:
		if n > 1 {
			lo = zeros.get(&zeros.j1, n-1, besselJ1Zero)
		}
		return lo, zeros.get(&zeros.j0, n, besselJ0Zero)
	case Sphere:
		return (k - 1) * math.Pi, k * math.Pi
	}
	return (k - 1) * math.Pi, (k - 0.5) * math.Pi
}

// zeros caches the Bessel zeros that bracket the cylinder's roots: they do not
// depend on Bi, and solving for them took two thirds of the time of NewSeries for
// a cylinder (measured when the cache was added), which a fitter calls once per Bi
// tried.
var zeros zeroCache

type zeroCache struct {
	sync.Mutex
	j0, j1 []float64 // j0[i] = j0,i+1; j1[i] = j1,i+1
}

// get returns the n-th (from 1) entry of the cache list, extending it with f.
// Entries are never changed once written.
func (z *zeroCache) get(list *[]float64, n int, f func(int) float64) float64 {
	z.Lock()
	defer z.Unlock()
	for len(*list) < n {
		*list = append(*list, f(len(*list)+1))
	}
	return (*list)[n-1]
}

// besselJ0Zero returns j0,n, the n-th positive zero of J0; it lies in
// ((n−½)π, nπ) (McMahon: j0,n ≈ (n−¼)π + 1/(8(n−¼)π)).
func besselJ0Zero(n int) float64 {
	k := float64(n)
	return brent(math.J0, (k-0.5)*math.Pi, k*math.Pi)
}

// besselJ1Zero returns j1,n, the n-th positive zero of J1; it lies in
// (nπ, (n+½)π) (McMahon: j1,n ≈ (n+¼)π − 3/(8(n+¼)π)).
func besselJ1Zero(n int) float64 {
	k := float64(n)
	return brent(func(z float64) float64 { return math.J1(z) }, k*math.Pi, (k+0.5)*math.Pi)
}

// brent returns a root of f in [a, b], where f(a) and f(b) differ in sign, by
// Brent's method (inverse quadratic interpolation safeguarded by bisection), to a
// relative accuracy of about 4 ulps. It panics if the ends do not bracket a root,
// which would be a bug in the brackets above.
func brent(f func(float64) float64, a, b float64) float64 {
	const eps = 0x1p-52
	const tiny = 1e-300
	fa, fb := f(a), f(b)
	if fa == 0 {
		return a
	}
	if fb == 0 {
		return b
	}
	if (fa > 0) == (fb > 0) {
		panic(fmt.Sprintf("conduction: no sign change in [%g, %g]: f = %g, %g", a, b, fa, fb))
	}
	c, fc := b, fb
	var d, e float64
	for range 200 {
		if (fb > 0) == (fc > 0) {
			c, fc = a, fa
			d = b - a
			e = d
		}
		if math.Abs(fc) < math.Abs(fb) {
			a, b, c = b, c, b
			fa, fb, fc = fb, fc, fb
		}
		tol := 2*eps*math.Abs(b) + tiny
		m := 0.5 * (c - b)
		if math.Abs(m) <= tol || fb == 0 {
			return b
		}
		if math.Abs(e) >= tol && math.Abs(fa) > math.Abs(fb) {
			d, e = interpolate(a, b, c, fa, fb, fc, m, tol, d, e)
		} else {
			d, e = m, m
		}
		a, fa = b, fb
		if math.Abs(d) > tol {
			b += d
		} else {
			b += math.Copysign(tol, m)
		}
		fb = f(b)
	}
	return b
}

// interpolate is one Brent step: it returns the new step d and the previous step
// e, falling back to bisection when the interpolated step is not safe.
func interpolate(a, b, c, fa, fb, fc, m, tol, d, e float64) (float64, float64) {
	s := fb / fa
	var p, q float64
	if a == c {
		p = 2 * m * s
		q = 1 - s
	} else {
		q = fa / fc
		r := fb / fc
		p = s * (2*m*q*(q-r) - (b-a)*(r-1))
		q = (q - 1) * (r - 1) * (s - 1)
	}
	if p > 0 {
		q = -q
	}
	p = math.Abs(p)
	if 2*p < math.Min(3*m*q-math.Abs(tol*q), math.Abs(e*q)) {
		return p / q, d
	}
	return m, m
}

// sinc returns sin(z)/z, 1 at z = 0.
func sinc(z float64) float64 {
	if math.Abs(z) < 1e-4 {
		return 1 - z*z/6
	}
	return math.Sin(z) / z
}
