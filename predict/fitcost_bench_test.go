package predict

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/settle-lab/settle/predict/surface"
)

// benchmarkCurve times fit on p, reporting CPU time per fit (cpu-ns/op) beside wall
// time: on a shared machine wall time mostly measures the neighbours.
func benchmarkCurve(b *testing.B, p LumpedProblem, fit func(p LumpedProblem)) {
	b.ReportAllocs()
	c0 := cpuTime()
	for b.Loop() {
		fit(p)
	}
	if c := cpuTime() - c0; c > 0 {
		b.ReportMetric(float64(c.Nanoseconds())/float64(b.N), "cpu-ns/op")
	}
}

// measuredAmbient returns an ambient series for p's times: 22 °C drifting by 0.5 K
// over the curve with 0.05 K of sensor noise (our own room).
func measuredAmbient(p LumpedProblem, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, seed+1))
	amb := make([]float64, len(p.Times))
	end := p.Times[len(p.Times)-1]
	for i, t := range p.Times {
		amb[i] = 22 + 0.5*t/end + 0.05*rng.NormFloat64()
	}
	return amb
}

// BenchmarkAnalyze2000Measured is BenchmarkAnalyze2000 (the hot steel bar, 2,000
// readings, whole engine) with a measured ambient.
func BenchmarkAnalyze2000Measured(b *testing.B) {
	p := hotBar()
	p.Ambient = measuredAmbient(p, 17)
	for i := range p.Celsius {
		p.Celsius[i] += p.Ambient[i] - 22
	}
	benchmarkCurve(b, p, func(p LumpedProblem) {
		Analyze(p, t0, []Target{{Name: "handle", Celsius: 50}}, AnalyzeOptions{})
	})
}

// hotBar is BenchmarkAnalyze2000's curve: the 50 mm steel bar of TestFitHRecoversODE
// cooling from 600 °C toward 22 °C, one reading a second, 0.1 K noise and 0.1 K steps.
func hotBar() LumpedProblem {
	law := SurfaceLaw{Geometry: surface.HorizontalCylinder, LengthM: 0.05, Emissivity: 0.7}
	p := simulateH(law, 7800*470*0.0125, 22, 600, 1, 1999)
	rng := rand.New(rand.NewPCG(15, 16))
	for i := range p.Celsius {
		p.Celsius[i] = 0.1 * math.Round((p.Celsius[i]+0.1*rng.NormFloat64())/0.1)
	}
	return p
}

// BenchmarkAnalyzeExp2000 is the whole engine on a plain exponential (22 + 180·e^(−t/900)
// °C over an hour, 0.1 K noise, 0.1 K steps) with the ambient fitted: the curve a
// constant h makes, where the h(T) fits run long before the lumped model is chosen.
func BenchmarkAnalyzeExp2000(b *testing.B) {
	rng := rand.New(rand.NewPCG(7, 8))
	p := synth(rng, 2000, 3600, 22, 180, 900, 0.1, 0.1)
	benchmarkCurve(b, p, func(p LumpedProblem) {
		Analyze(p, t0, []Target{{Name: "handle", Celsius: 50}}, AnalyzeOptions{})
	})
}

// BenchmarkAnalyzeExp2000Measured is BenchmarkAnalyzeExp2000 with a measured ambient.
func BenchmarkAnalyzeExp2000Measured(b *testing.B) {
	rng := rand.New(rand.NewPCG(7, 8))
	p := synth(rng, 2000, 3600, 22, 180, 900, 0.1, 0.1)
	p.Ambient = measuredAmbient(p, 9)
	for i := range p.Celsius {
		p.Celsius[i] += p.Ambient[i] - 22
	}
	benchmarkCurve(b, p, func(p LumpedProblem) {
		Analyze(p, t0, []Target{{Name: "handle", Celsius: 50}}, AnalyzeOptions{})
	})
}

// BenchmarkAnalyzeEarly is the whole engine on the first readings of the steel bar
// (100, 200 and 400 s of it, ambient fitted): early in a segment the data barely fix
// the ambient, and the h(T) fits' iterations run long.
func BenchmarkAnalyzeEarly(b *testing.B) {
	hot := hotBar()
	for _, n := range []int{100, 200, 400} {
		p := LumpedProblem{Times: hot.Times[:n], Celsius: hot.Celsius[:n]}
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			benchmarkCurve(b, p, func(p LumpedProblem) {
				Analyze(p, t0, []Target{{Name: "handle", Celsius: 50}}, AnalyzeOptions{})
			})
		})
	}
}
