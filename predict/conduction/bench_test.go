package conduction

import (
	"fmt"
	"math"
	"testing"
)

// foGrid returns n Fourier numbers spread from lo to hi, denser early, as a fitted
// cooling curve sampled at a steady rate over a run is in log time.
func foGrid(n int, lo, hi float64) []float64 {
	fo := make([]float64, n)
	for i := range fo {
		fo[i] = lo + (hi-lo)*float64(i)/float64(n-1)
	}
	return fo
}

// Evaluating a 2,000-point curve at a fixed position (the fitting hot path).
// Goal: well under 1 ms.
func BenchmarkCurve2000(b *testing.B) {
	for _, s := range shapes {
		for _, lo := range []float64{1e-3, 1e-2} {
			b.Run(fmt.Sprintf("%v/Fo=%g..2", s, lo), func(b *testing.B) {
				c := NewSeries(s, 5, TermsFor(lo)).At(0)
				fo, dst := foGrid(2000, lo, 2), make([]float64, 2000)
				for b.Loop() {
					c.Fill(dst, fo)
				}
			})
		}
	}
}

// Series.Theta over 2,000 points (position varies, so X is evaluated per term).
func BenchmarkSeriesTheta2000(b *testing.B) {
	for _, s := range shapes {
		b.Run(s.String(), func(b *testing.B) {
			se := NewSeries(s, 5, TermsFor(1e-3))
			fo := foGrid(2000, 1e-3, 2)
			sum := 0.0
			for b.Loop() {
				for _, f := range fo {
					sum += se.Theta(f, 1)
				}
			}
			if math.IsNaN(sum) {
				b.Fatal("NaN")
			}
		})
	}
}

// Building a series (roots and coefficients): once per Bi tried by a fitter.
func BenchmarkNewSeries(b *testing.B) {
	for _, s := range shapes {
		for _, minFo := range []float64{1e-2, 1e-3} {
			n := TermsFor(minFo)
			b.Run(fmt.Sprintf("%v/terms=%d", s, n), func(b *testing.B) {
				for b.Loop() {
					NewSeries(s, 5, n)
				}
			})
		}
	}
}

// BenchmarkFitSeries2000 fits the constant-h series model to a 2,000-point noisy
// curve (concrete, Bi = 2, Fo up to 1, ambient fitted). Goal (issue 4): < 2 ms.
func BenchmarkFitSeries2000(b *testing.B) {
	for _, c := range []struct {
		shape  Shape
		sensor Position
	}{{Slab, Centre}, {Cylinder, Surface}, {Sphere, Centre}, {ShortCylinder, Surface}, {Cuboid, Centre}} {
		b.Run(fmt.Sprintf("%v/%v", c.shape, c.sensor), func(b *testing.B) {
			sp := concrete(c.shape, c.sensor)
			until := sp.Size * sp.Size / sp.Diffusivity()
			times, y := curve(truth(sp, 2, 200, 20, c.sensor), 2000, until, 0.2, 1)
			for b.Loop() {
				if _, err := FitSeries(sp, times, y, math.NaN()); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkFitFV2000 fits the FV model with h(Ts) to a 2,000-point noisy curve of
// the hot concrete cylinder (600 °C, four hours, Bi from above 2 to below 0.5).
// Goal (issue 4): < 50 ms.
func BenchmarkFitFV2000(b *testing.B) {
	for _, sensor := range []Position{Centre, Surface} {
		for _, fitAmb := range []bool{false, true} {
			b.Run(fmt.Sprintf("%v/fitted-ambient=%v", sensor, fitAmb), func(b *testing.B) {
				sp := hotCylinder(sensor)
				m := &FV{Shape: sp.Shape, Size: sp.Size, Conductivity: sp.Conductivity, Diffusivity: sp.Diffusivity(),
					Ambient: 20, H: NaturalH(sp, 1.3, 20), Cells: 48}
				tr, err := m.Run(600, 4*3600)
				if err != nil {
					b.Fatal(err)
				}
				times, y := curve(func(t float64) float64 { return tr.At(sensor, t) }, 2000, 4*3600, 0.3, 2)
				amb := 20.0
				if fitAmb {
					amb = math.NaN()
				}
				for b.Loop() {
					if _, err := FitFV(sp, times, y, amb); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}

// BenchmarkFVRun is one FV run of the hot cylinder over four hours at the default
// grid (the unit of FitFV's cost).
func BenchmarkFVRun(b *testing.B) {
	sp := hotCylinder(Centre)
	m := &FV{Shape: sp.Shape, Size: sp.Size, Conductivity: sp.Conductivity, Diffusivity: sp.Diffusivity(),
		Ambient: 20, H: NaturalH(sp, 1, 20)}
	for b.Loop() {
		if _, err := m.Run(600, 4*3600); err != nil {
			b.Fatal(err)
		}
	}
}
