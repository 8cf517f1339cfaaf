package conduction

import (
	"math"
	"testing"
)

// biSweep returns Biot numbers from 1e-4 to 1e4, perDecade per decade, and +Inf.
func biSweep(perDecade int) []float64 {
	var bis []float64
	for i := 0; i <= 8*perDecade; i++ {
		bis = append(bis, math.Pow(10, -4+float64(i)/float64(perDecade)))
	}
	return append(bis, math.Inf(1))
}

// newtonStep returns |f/f'| at z for the eigenvalue equation, written here
// independently of the package: the distance from z to the nearest root, to first
// order.
func newtonStep(s Shape, bi, z float64) float64 {
	var f, df float64
	switch s {
	case Slab: // z·sin z − Bi·cos z
		f = z*math.Sin(z) - bi*math.Cos(z)
		df = math.Sin(z) + z*math.Cos(z) + bi*math.Sin(z)
	case Cylinder: // z·J1(z) − Bi·J0(z); (z·J1)' = z·J0, J0' = −J1
		f = z*math.J1(z) - bi*math.J0(z)
		df = z*math.J0(z) + bi*math.J1(z)
	case Sphere: // Bi·sin z − (sin z − z·cos z); (sin z − z·cos z)' = z·sin z
		f = bi*math.Sin(z) - sinMinusZCosTaylor(z)
		df = bi*math.Cos(z) - z*math.Sin(z)
	}
	return math.Abs(f / df)
}

// sinMinusZCosTaylor is sin z − z·cos z, by its Taylor series Σ (−1)^k·2k·z^(2k+1)/(2k+1)!
// (k >= 1) for small z, where the direct form cancels.
func sinMinusZCosTaylor(z float64) float64 {
	if z > 0.5 {
		return math.Sin(z) - z*math.Cos(z)
	}
	sum, term := 0.0, z // term = (−1)^k·z^(2k+1)/(2k+1)!
	for k := 1; k < 12; k++ {
		term *= -z * z / float64((2*k)*(2*k+1))
		sum += -2 * float64(k) * term
	}
	return sum
}

// interval returns the open interval that must hold root n (from 1). The cylinder's
// ends are the Bessel zeros j1,n−1 and j0,n, found here by Newton from McMahon's
// asymptotic start (Abramowitz & Stegun 9.5.12), independently of the package.
func interval(s Shape, n int) (lo, hi float64) {
	k := float64(n)
	switch s {
	case Slab:
		return (k - 1) * math.Pi, (k - 0.5) * math.Pi
	case Sphere:
		return (k - 1) * math.Pi, k * math.Pi
	}
	if n > 1 {
		b := (k - 1 + 0.25) * math.Pi
		lo = newtonZero(func(z float64) (float64, float64) {
			return math.J1(z), math.J0(z) - math.J1(z)/z
		}, b-3/(8*b))
	}
	b := (k - 0.25) * math.Pi
	hi = newtonZero(func(z float64) (float64, float64) {
		return math.J0(z), -math.J1(z)
	}, b+1/(8*b))
	return lo, hi
}

func newtonZero(f func(float64) (float64, float64), z float64) float64 {
	for range 50 {
		v, d := f(z)
		z -= v / d
	}
	return z
}

// Roots at every Bi from 1e-4 to 1e4 (and +Inf): strictly increasing, one in each
// known interval, and each within a few ulps of a true root.
func TestEigenvaluesRobust(t *testing.T) {
	n := 300
	if testing.Short() {
		n = 60
	}
	for _, s := range []Shape{Slab, Cylinder, Sphere} {
		ends := make([][2]float64, n)
		for i := range ends {
			ends[i][0], ends[i][1] = interval(s, i+1)
		}
		for _, bi := range biSweep(10) {
			checkRoots(t, s, bi, Eigenvalues(s, bi, n), ends)
		}
	}
}

func checkRoots(t *testing.T, s Shape, bi float64, z []float64, ends [][2]float64) {
	t.Helper()
	for i, zi := range z {
		lo, hi := ends[i][0], ends[i][1]
		inside := zi > lo && zi < hi
		if math.IsInf(bi, 1) {
			inside = near(zi, hi, 1e-12*hi) // the fixed-temperature limit is the end
		}
		if !inside {
			t.Fatalf("%v Bi=%g: root %d = %.15g outside (%.15g, %.15g)", s, bi, i+1, zi, lo, hi)
		}
		if i > 0 && !(zi > z[i-1]) {
			t.Fatalf("%v Bi=%g: root %d = %g not above root %d = %g", s, bi, i+1, zi, i, z[i-1])
		}
		if math.IsInf(bi, 1) {
			continue
		}
		if step := newtonStep(s, bi, zi); step > 1e-14*zi+1e-300 {
			t.Fatalf("%v Bi=%g: root %d = %.17g is %g from the true root", s, bi, i+1, zi, step)
		}
	}
}

// Very small Bi: the first root goes like sqrt(Bi·(1, 2, 3)) (expansion of each
// equation for small ζ), and the others stay just above (n−1)π or j1,n−1.
func TestEigenvaluesTinyBi(t *testing.T) {
	for _, s := range []Shape{Slab, Cylinder, Sphere} {
		for _, bi := range []float64{1e-12, 1e-8, 1e-4} {
			z := Eigenvalues(s, bi, 3)
			want := math.Sqrt(bi / s.LumpedFactor())
			if !near(z[0], want, 1e-3*want) {
				t.Errorf("%v Bi=%g: ζ1 = %g, want ≈ %g", s, bi, z[0], want)
			}
			if c := NewSeries(s, bi, 3).Coefficients()[0]; !near(c, 1, 2*bi) {
				t.Errorf("%v Bi=%g: C1 = %.15g, want 1 + O(Bi)", s, bi, c)
			}
		}
	}
}

// Misuse panics: a Biot number that is not positive.
func TestEigenvaluesRejectBadBi(t *testing.T) {
	for _, bi := range []float64{0, -1, math.NaN()} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("Bi=%v: no panic", bi)
				}
			}()
			Eigenvalues(Slab, bi, 1)
		}()
	}
}

// eigenvaluesFrom, started from the roots of a nearby or a distant Biot number,
// finds the same roots as Eigenvalues (to 1e-13 relative) at every Bi of a grid
// over 1e-4..1e4: no root missed or doubled however poor the starting points.
func TestEigenvaluesFromGuesses(t *testing.T) {
	for _, s := range []Shape{Slab, Cylinder, Sphere} {
		for e := -4.0; e <= 4; e += 0.5 {
			bi := math.Pow(10, e)
			want := Eigenvalues(s, bi, 60)
			for _, from := range []float64{bi * 1.02, bi / 1.3, 1e-4, 1e4} {
				got := eigenvaluesFrom(s, bi, 60, Eigenvalues(s, from, 40))
				for i := range want {
					if math.Abs(got[i]-want[i]) > 1e-13*want[i] {
						t.Fatalf("%v Bi=%g from roots at Bi=%g: root %d = %.17g, want %.17g", s, bi, from, i+1, got[i], want[i])
					}
				}
			}
		}
	}
}
