package predict

import (
	"math"
	"math/rand/v2"
	"testing"
)

// BenchmarkAnalyzeWarm2000 is the whole engine on 2,001 readings, 2 s apart, of a
// solid specimen in still air from 92 °C (DefaultSurfaceLaw at emissivity 0.9, ρcV/A
// 4e4 J/(m²·K), settling at 22 °C; 0.1 K noise, 0.1 K steps; our own curve) with the
// ambient fitted: a curve in the open-water range (40–100 °C, cooling), where
// fitOpenWater fits the four open-water laws beside the dry ones (and loses). The cost
// of trying them is this against the same benchmark on the code before
// evaporation.go, run side by side.
func BenchmarkAnalyzeWarm2000(b *testing.B) {
	law := DefaultSurfaceLaw
	law.Emissivity = waterEmissivity
	benchmarkWarmCurve(b, law)
}

// benchmarkWarmCurve analyses, with a 40 °C target, 2,000 readings of law's curve from
// 92 °C in a 22 °C room (ρcV/A 4e4 J/(m²·K), one every 2 s, 0.1 K of noise, rounded to
// 0.1 K as a logger would).
func benchmarkWarmCurve(b *testing.B, law SurfaceLaw) {
	p := simulateH(law, 4e4, 22, 92, 2, 4000)
	rng := rand.New(rand.NewPCG(7, 8))
	for i := range p.Celsius {
		p.Celsius[i] = 0.1 * math.Round((p.Celsius[i]+0.1*rng.NormFloat64())/0.1)
	}
	benchmarkCurve(b, p, func(p LumpedProblem) {
		Analyze(p, t0, []Target{{Name: "handle", Celsius: 40}}, AnalyzeOptions{})
	})
}

// BenchmarkAnalyzeWater2000 is BenchmarkAnalyzeWarm2000's curve under the open-water
// law (a share of 0.4): the dry fit settles far above the room and the four
// open-water fits run, and win.
func BenchmarkAnalyzeWater2000(b *testing.B) {
	law := DefaultSurfaceLaw
	law.Emissivity, law.OpenWater = waterEmissivity, 0.4
	benchmarkWarmCurve(b, law)
}
