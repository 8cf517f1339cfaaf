package conduction

import (
	"math"
	"testing"
)

var shapes = []Shape{Slab, Cylinder, Sphere}

// Fo → 0: the inside is still at the initial temperature.
func TestEarlyTimeInsideIsInitial(t *testing.T) {
	for _, s := range shapes {
		for _, bi := range []float64{0.1, 1, 10, 1000, math.Inf(1)} {
			se := NewSeries(s, bi, 0)
			for _, fo := range []float64{0, se.MinFo(), 1e-4, 1e-3} {
				// At depth d the disturbance has reached about erfc(d/(2·sqrt(Fo))):
				// below 1e-12 for d = 0.5 at Fo = 1e-3.
				for _, pos := range []float64{0, 0.25, 0.5} {
					if got := se.Theta(fo, pos); !near(got, 1, 1e-11) {
						t.Errorf("%v Bi=%g Fo=%g pos=%g: θ = %.15f, want 1", s, bi, fo, pos, got)
					}
				}
			}
		}
	}
}

// semiInfinite is θ/θi at depth d (in units of L) below a surface with convection,
// for a semi-infinite solid (Incropera 6th ed. Eq. 5.60, from memory):
// erf(ξ) + exp(Bi·d + Bi²·Fo)·erfc(ξ + Bi·sqrt(Fo)), ξ = d/(2·sqrt(Fo)).
func semiInfinite(bi, fo, d float64) float64 {
	xi := d / (2 * math.Sqrt(fo))
	return math.Erf(xi) + math.Exp(bi*d+bi*bi*fo)*math.Erfc(xi+bi*math.Sqrt(fo))
}

// Early times near the surface of a slab: the series (down to its MinFo) against the
// semi-infinite solid, exact for the slab while the far face is unseen.
func TestEarlyTimeSlabSurface(t *testing.T) {
	for _, bi := range []float64{0.1, 1, 10, 100} {
		se := NewSeries(Slab, bi, 0)
		for _, fo := range []float64{se.MinFo(), 1e-4, 1e-3, 1e-2} {
			for _, d := range []float64{0, 0.002, 0.01, 0.05} {
				want := semiInfinite(bi, fo, d)
				if got := se.Theta(fo, 1-d); !near(got, want, 1e-9) {
					t.Errorf("Bi=%g Fo=%g depth=%g: θ = %.12f, semi-infinite %.12f", bi, fo, d, got, want)
				}
			}
		}
	}
}

// A Series sized with TermsFor reaches the asked Fo, and the default reaches 5e-5.
func TestTermsForAndMinFo(t *testing.T) {
	for _, s := range shapes {
		if m := NewSeries(s, 1, 0).MinFo(); m > 5e-5 {
			t.Errorf("%v: default MinFo = %g, want <= 5e-5", s, m)
		}
		for _, fo := range []float64{1e-1, 1e-2, 1e-3} {
			se := NewSeries(s, 5, TermsFor(fo))
			if se.MinFo() > fo {
				t.Errorf("%v: TermsFor(%g) = %d gives MinFo %g", s, fo, se.Terms(), se.MinFo())
			}
			full := NewSeries(s, 5, 0)
			for _, pos := range []float64{0, 0.7, 1} {
				if a, b := se.Theta(fo, pos), full.Theta(fo, pos); !near(a, b, 1e-14) {
					t.Errorf("%v Fo=%g pos=%g: %d terms %.16f, %d terms %.16f", s, fo, pos, se.Terms(), a, full.Terms(), b)
				}
			}
		}
	}
}

// Small Bi: the mean (and centre) follow the lumped curve exp(−t/τ), t/τ = Bi·Fo/f
// with f = V/(A·L) (shared/reference 2.1: t/τ = Bi·Fo on Lc = V/A), to O(Bi).
func TestSmallBiIsLumped(t *testing.T) {
	for _, s := range shapes {
		for _, bi := range []float64{1e-4, 1e-3, 1e-2} {
			se := NewSeries(s, bi, 0)
			for _, tt := range []float64{0.1, 1, 3} { // t/τ
				fo := tt * s.LumpedFactor() / bi
				want := math.Exp(-tt)
				for name, got := range map[string]float64{"mean": se.MeanTheta(fo), "centre": se.Theta(fo, 0), "surface": se.Theta(fo, 1)} {
					if !near(got/want, 1, bi*(1+tt)) {
						t.Errorf("%v Bi=%g t/τ=%g %s: θ = %.8f, lumped %.8f", s, bi, tt, name, got, want)
					}
				}
			}
		}
	}
}

// Large Fo: the series keeps its leading term (relative accuracy, not 0).
func TestLateTimeRelative(t *testing.T) {
	for _, s := range shapes {
		se, one := NewSeries(s, 10, 0), NewOneTerm(s, 10)
		for _, fo := range []float64{5, 20, 50} {
			got, want := se.Theta(fo, 0.5), one.Theta(fo, 0.5)
			if want == 0 || !near(got/want, 1, 1e-12) {
				t.Errorf("%v Fo=%g: series %g, one-term %g", s, fo, got, want)
			}
		}
	}
}

// Curve (fixed position) agrees with Series.Theta, and FoAt inverts it.
func TestCurve(t *testing.T) {
	fos := []float64{1e-3, 0.01, 0.1, 0.5, 2}
	for _, s := range shapes {
		se := NewSeries(s, 3, 0)
		for _, pos := range []float64{0, 0.5, 1} {
			c := se.At(pos)
			got := make([]float64, len(fos))
			c.Fill(got, fos)
			for i, fo := range fos {
				if want := se.Theta(fo, pos); !near(got[i], want, 1e-15) {
					t.Errorf("%v pos=%g Fo=%g: curve %.17g, series %.17g", s, pos, fo, got[i], want)
				}
				if 1-got[i] < 1e-6 {
					continue // θ still ≈ 1: Fo is not defined by θ there
				}
				if back := c.FoAt(got[i]); !near(back, fo, 1e-10*fo) {
					t.Errorf("%v pos=%g: FoAt(θ(%g)) = %.15g", s, pos, fo, back)
				}
			}
		}
		m := se.Mean()
		for _, fo := range fos {
			if a, b := m.Theta(fo), se.MeanTheta(fo); !near(a, b, 1e-15) {
				t.Errorf("%v Fo=%g: mean curve %g, MeanTheta %g", s, fo, a, b)
			}
		}
	}
}

// The volume mean equals a direct numerical average of the profile (Simpson's rule
// over x, 2πr dr or 4πr² dr).
func TestMeanIsVolumeAverage(t *testing.T) {
	weight := map[Shape]func(x float64) float64{
		Slab:     func(float64) float64 { return 1 },
		Cylinder: func(x float64) float64 { return 2 * x },
		Sphere:   func(x float64) float64 { return 3 * x * x },
	}
	for _, s := range shapes {
		se := NewSeries(s, 2, 0)
		for _, fo := range []float64{0.01, 0.1, 1} {
			const n = 2000
			sum := 0.0
			for i := 0; i <= n; i++ {
				x := float64(i) / n
				w := 2.0
				if i == 0 || i == n {
					w = 1
				} else if i%2 == 1 {
					w = 4
				}
				sum += w * weight[s](x) * se.Theta(fo, x)
			}
			got := sum / (3 * n)
			if want := se.MeanTheta(fo); !near(got, want, 1e-9) {
				t.Errorf("%v Fo=%g: Simpson mean %.12f, MeanTheta %.12f", s, fo, got, want)
			}
		}
	}
}

// Fill over evenly spaced Fourier numbers (its stepping path), with a jittered
// stretch and a backward jump (its direct path), agrees with Series.Theta to 1e-12
// of θi at every point.
func TestCurveFillEvenSteps(t *testing.T) {
	var fos []float64
	for i := 1; i <= 3000; i++ {
		fos = append(fos, 2*float64(i)/3000)
	}
	for i := range 40 {
		fos = append(fos, 0.001*float64(i)+1e-9*float64(i%3)) // jittered
	}
	fos = append(fos, 0.5, 0.5+1e-4, 0.5+2e-4, 0.5+3e-4, 0, 1e-4, 2e-4, 3e-4)
	for _, s := range shapes {
		for _, bi := range []float64{0.01, 1, 100} {
			se := NewSeries(s, bi, TermsFor(1e-4))
			for _, pos := range []float64{0, 1} {
				got := make([]float64, len(fos))
				se.At(pos).Fill(got, fos)
				for i, fo := range fos {
					if want := se.Theta(fo, pos); math.Abs(got[i]-want) > 1e-12 {
						t.Fatalf("%v Bi=%g pos=%g point %d Fo=%g: Fill %.17g, Theta %.17g", s, bi, pos, i, fo, got[i], want)
					}
				}
			}
		}
	}
}
