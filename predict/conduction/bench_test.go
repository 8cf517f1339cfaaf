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
