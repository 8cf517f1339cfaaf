package conduction

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// concrete is a concrete specimen (values in the range of the material table's
// concrete row, predict/material, from memory of Incropera Table A.3): thick and
// poorly conducting, so Bi on its radius is well above 0.1 in still air.
func concrete(shape Shape, sensor Position) Specimen {
	return Specimen{Shape: shape, Size: 0.05, Length: 0.1, Width: 0.075,
		Density: 2300, SpecificHeat: 880, Conductivity: 1.4, Emissivity: 0.9, Sensor: sensor}
}

// truth is the exact series temperature of sp at position p: the model the fit must
// recover, built independently of the fit's own model through the public product
// types.
func truth(sp Specimen, bi, t0, amb float64, p Position) func(t float64) float64 {
	var theta func(fo float64) float64
	switch sp.Shape {
	case ShortCylinder:
		c := NewFiniteCylinder(bi, sp.Length/sp.Size, 0)
		theta = func(fo float64) float64 {
			if p == VolumeMean {
				return c.MeanTheta(fo)
			}
			return c.Theta(fo, float64(p), 0)
		}
	case Cuboid:
		b := NewBlock(bi, sp.Length/sp.Size, sp.Width/sp.Size, 0)
		theta = func(fo float64) float64 {
			if p == VolumeMean {
				return b.MeanTheta(fo)
			}
			return b.Theta(fo, float64(p), 0, 0)
		}
	default:
		s := NewSeries(sp.Shape, bi, 0)
		theta = func(fo float64) float64 {
			if p == VolumeMean {
				return s.MeanTheta(fo)
			}
			return s.Theta(fo, float64(p))
		}
	}
	return func(t float64) float64 { return amb + (t0-amb)*theta(sp.Fo(t)) }
}

// curve samples f at n times evenly over [0, until] (the first at until/n) with
// Gaussian noise of sd °C from a fixed seed.
func curve(f func(float64) float64, n int, until, sd float64, seed uint64) (times, celsius []float64) {
	rng := rand.New(rand.NewPCG(seed, 1))
	for i := 1; i <= n; i++ {
		t := until * float64(i) / float64(n)
		times = append(times, t)
		celsius = append(celsius, f(t)+sd*rng.NormFloat64())
	}
	return times, celsius
}

// The series fit recovers known Bi and T0 (and the ambient when not given) from
// noisy synthetic curves of the exact series: every shape, both sensor positions,
// Bi 0.3 and 3. The readings cover Fo up to 1.2/Bi (about two thirds of the excess
// gone, so the ambient is pinned down when fitted) with 0.2 °C noise, a logger's
// typical resolution. Checks: the true values lie within 4 standard errors, Bi
// within 5 %, T0 within 1 °C, and RMSE within 20 % of the noise.
func TestFitSeriesRecovers(t *testing.T) {
	const t0, amb, sd = 180.0, 22.0, 0.2
	for _, shape := range []Shape{Slab, Cylinder, Sphere, ShortCylinder, Cuboid} {
		for _, sensor := range []Position{Centre, Surface} {
			for _, bi := range []float64{0.3, 3} {
				for _, fitAmb := range []bool{false, true} {
					name := fmt.Sprintf("%v/%v/Bi=%g/fitted-ambient=%v", shape, sensor, bi, fitAmb)
					t.Run(name, func(t *testing.T) {
						sp := concrete(shape, sensor)
						until := 1.2 / bi * sp.Size * sp.Size / sp.Diffusivity()
						times, y := curve(truth(sp, bi, t0, amb, sensor), 400, until, sd, uint64(len(name)))
						given := amb
						if fitAmb {
							given = math.NaN()
						}
						f, err := FitSeries(sp, times, y, given)
						if err != nil {
							t.Fatal(err)
						}
						checkEstimate(t, "Bi", f.Bi, bi, 0.05*bi)
						checkEstimate(t, "T0", f.Initial, t0, 1)
						if fitAmb {
							checkEstimate(t, "ambient", f.Ambient, amb, 3)
						} else if f.Ambient != (Estimate{amb, 0}) {
							t.Errorf("given ambient came back as %+v", f.Ambient)
						}
						if math.Abs(f.RMSE-sd) > 0.2*sd {
							t.Errorf("RMSE %.3f, noise %.3f", f.RMSE, sd)
						}
						if want := f.H.Value * sp.LumpedLength() / sp.Conductivity; !near(f.LumpedBi, want, 1e-12*want) {
							t.Errorf("lumped Bi %g, want %g", f.LumpedBi, want)
						}
					})
				}
			}
		}
	}
}

// checkEstimate asserts |value − want| <= tol and <= 4 standard errors (a fit that
// claims too small an error fails too).
func checkEstimate(t *testing.T, name string, e Estimate, want, tol float64) {
	t.Helper()
	d := math.Abs(e.Value - want)
	if d > tol {
		t.Errorf("%s = %g ± %g, want %g within %g", name, e.Value, e.StdErr, want, tol)
	}
	if !(e.StdErr > 0) || d > 4*e.StdErr {
		t.Errorf("%s = %g ± %g, want %g: off by %.1f standard errors", name, e.Value, e.StdErr, want, d/e.StdErr)
	}
}

// Core from surface (issue 4 item 5): a thermocouple on the surface of a concrete
// cylinder (Bi = 2 on the radius). Fitted to the first half of the cooling, the fit
// forecasts the centre over the whole run — hotter than the surface while cooling —
// within 0.5 °C of the exact centre, and Hottest is the centre.
func TestFitSeriesSurfaceForecastsCentre(t *testing.T) {
	const bi, t0, amb = 2.0, 200.0, 20.0
	for _, shape := range []Shape{Cylinder, ShortCylinder} {
		sp := concrete(shape, Surface)
		until := sp.Size * sp.Size / sp.Diffusivity() // Fo = 1
		times, y := curve(truth(sp, bi, t0, amb, Surface), 500, until/2, 0.2, 7)
		f, err := FitSeries(sp, times, y, math.NaN())
		if err != nil {
			t.Fatal(err)
		}
		centre := truth(sp, bi, t0, amb, Centre)
		for _, frac := range []float64{0.1, 0.25, 0.5, 0.75, 1} {
			at := frac * until
			got, want, surf := f.Temperature(Centre, at), centre(at), f.Temperature(Surface, at)
			if !near(got, want, 0.5) {
				t.Errorf("%v t=%.0f s: forecast centre %.2f °C, exact %.2f °C", shape, at, got, want)
			}
			if got <= surf+1 {
				t.Errorf("%v t=%.0f s: centre %.2f °C not hotter than surface %.2f °C", shape, at, got, surf)
			}
			if h := f.Hottest(at); h != got {
				t.Errorf("%v t=%.0f s: hottest %.2f °C, centre %.2f °C", shape, at, h, got)
			}
		}
	}
}

func TestFitSeriesRejectsBadInput(t *testing.T) {
	sp := concrete(Slab, Centre)
	cases := map[string]struct {
		sp        Specimen
		times, ys []float64
	}{
		"lengths":   {sp, []float64{1, 2, 3}, []float64{1, 2}},
		"too few":   {sp, []float64{1, 2}, []float64{1, 2}},
		"backwards": {sp, []float64{1, 3, 2, 4}, []float64{5, 4, 3, 2}},
		"NaN":       {sp, []float64{1, 2, 3, 4}, []float64{5, math.NaN(), 3, 2}},
		"no k":      {Specimen{Shape: Slab, Size: 1, Density: 1, SpecificHeat: 1}, []float64{1, 2, 3, 4}, []float64{4, 3, 2, 1}},
		"block":     {Specimen{Shape: Cuboid, Size: 1, Length: 1, Density: 1, SpecificHeat: 1, Conductivity: 1}, []float64{1, 2, 3, 4}, []float64{4, 3, 2, 1}},
	}
	for name, c := range cases {
		if _, err := FitSeries(c.sp, c.times, c.ys, math.NaN()); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

// The reported covariance of (ln Bi, T0, T∞) matches the scatter of the fitted
// values over repeated noisy curves (independent noise, so no widening applies):
// standard deviations within 25 % and correlations within 0.15. Varied moves the
// parameters it is asked to.
func TestFitSeriesCovariance(t *testing.T) {
	sp := concrete(Slab, Centre)
	until := sp.Size * sp.Size / sp.Diffusivity()
	const reps = 80
	var vals [reps][3]float64
	var first *SeriesFit
	for k := range reps {
		times, y := curve(truth(sp, 2, 200, 20, Centre), 200, until, 0.5, uint64(k+100))
		f, err := FitSeries(sp, times, y, math.NaN())
		if err != nil {
			t.Fatal(err)
		}
		if f.Cov == nil {
			t.Fatal("no covariance")
		}
		if first == nil {
			first = f
		}
		vals[k] = [3]float64{math.Log(f.Bi.Value), f.Initial.Value, f.Ambient.Value}
	}
	var mean, sd [3]float64
	for _, v := range vals {
		for j := range 3 {
			mean[j] += v[j] / reps
		}
	}
	cov := func(a, b int) float64 {
		s := 0.0
		for _, v := range vals {
			s += (v[a] - mean[a]) * (v[b] - mean[b])
		}
		return s / (reps - 1)
	}
	for j := range 3 {
		sd[j] = math.Sqrt(cov(j, j))
		got := math.Sqrt(first.Cov.At(j, j))
		if r := got / sd[j]; r < 0.75 || r > 1.25 {
			t.Errorf("parameter %d: reported sd %.4g, scatter %.4g", j, got, sd[j])
		}
	}
	for a := range 3 {
		for b := a + 1; b < 3; b++ {
			want := cov(a, b) / (sd[a] * sd[b])
			got := first.Cov.At(a, b) / math.Sqrt(first.Cov.At(a, a)*first.Cov.At(b, b))
			if math.Abs(got-want) > 0.15 {
				t.Errorf("correlation %d–%d: reported %.3f, scatter %.3f", a, b, got, want)
			}
		}
	}
	v, err := first.Varied([]float64{0.1, 2, -1})
	if err != nil {
		t.Fatal(err)
	}
	g := v.(*SeriesFit)
	if math.Abs(g.Bi.Value-first.Bi.Value*math.Exp(0.1)) > 1e-12*g.Bi.Value ||
		g.Initial.Value != first.Initial.Value+2 || g.Ambient.Value != first.Ambient.Value-1 {
		t.Errorf("Varied: Bi %g, T0 %g, T∞ %g from %g, %g, %g", g.Bi.Value, g.Initial.Value, g.Ambient.Value,
			first.Bi.Value, first.Initial.Value, first.Ambient.Value)
	}
	want := truth(sp, g.Bi.Value, g.Initial.Value, g.Ambient.Value, Centre)(until / 2)
	if got := g.Temperature(Centre, until/2); math.Abs(got-want) > 1e-6 {
		t.Errorf("Varied fit at t=%g: %.6f °C, exact %.6f °C", until/2, got, want)
	}
}
