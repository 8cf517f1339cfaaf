package conduction

import (
	"errors"
	"math"
	"testing"
)

// hotCylinder is a 10 cm diameter concrete cylinder out of a 600 °C kiln into 20 °C
// still air (our own invented scenario): with natural convection and radiation h
// falls several-fold as it cools, so Bi on the radius runs from above 2 to below
// 0.5 over four hours — neither the lumped model nor a single constant h fits.
func hotCylinder(sensor Position) Specimen { return concrete(Cylinder, sensor) }

// fvTruth is a finer FV solution (48 cells, fine steps) than the fit uses, with a
// known scale on the correlations' h: the "measured" curve.
func fvTruth(t *testing.T, sp Specimen, scale, t0, amb, until float64) *Trajectory {
	t.Helper()
	m := &FV{Shape: sp.Shape, Size: sp.Size, Conductivity: sp.Conductivity, Diffusivity: sp.Diffusivity(),
		Ambient: amb, H: NaturalH(sp, scale, amb), Cells: 48, Step: StepControl{Rate: 0.005}}
	tr, err := m.Run(t0, until)
	if err != nil {
		t.Fatal(err)
	}
	return tr
}

// FitFV recovers a known h scale and T0 from a noisy curve made by a finer FV solve
// with the same h(Ts), for both sensor positions, with the ambient given and
// fitted; and from a surface sensor it forecasts the centre within 1 % of the
// initial excess, hotter than the surface. Tolerances: scale within 3 %, T0 within
// 3 °C (the truth's finer grid differs by about 1e-3 of θi), both inside 4
// standard errors.
func TestFitFVRecovers(t *testing.T) {
	const scale, t0, amb, sd = 1.3, 600.0, 20.0, 0.3
	n := 600
	if testing.Short() {
		n = 200
	}
	for _, sensor := range []Position{Centre, Surface} {
		for _, fitAmb := range []bool{false, true} {
			sp := hotCylinder(sensor)
			until := 4 * 3600.0
			tr := fvTruth(t, sp, scale, t0, amb, 2*until)
			times, y := curve(func(t float64) float64 { return tr.At(sensor, t) }, n, until, sd, 3)
			given := amb
			if fitAmb {
				given = math.NaN()
			}
			f, err := FitFV(sp, times, y, given)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%v fitted ambient %v: scale %.4f ± %.4f, T0 %.2f ± %.2f, ambient %.2f ± %.2f, Bi %.2f..%.2f, RMSE %.3f, %d iterations",
				sensor, fitAmb, f.Scale.Value, f.Scale.StdErr, f.Initial.Value, f.Initial.StdErr,
				f.Ambient.Value, f.Ambient.StdErr, f.BiStart, f.BiEnd, f.RMSE, f.Iterations)
			checkEstimate(t, "scale", f.Scale, scale, 0.03*scale)
			checkEstimate(t, "T0", f.Initial, t0, 3)
			if f.RMSE > 1.3*sd {
				t.Errorf("RMSE %.3f with noise %.3f", f.RMSE, sd)
			}
			if !(f.BiStart > 1 && f.BiEnd < f.BiStart) {
				t.Errorf("test premise: Bi from %.2f to %.2f should start above 1 and fall", f.BiStart, f.BiEnd)
			}
			for _, frac := range []float64{0.05, 0.3, 1, 1.5} {
				at := frac * until
				got, want := f.Temperature(Centre, at), tr.At(Centre, at)
				if !near(got, want, 0.01*(t0-amb)) {
					t.Errorf("%v t=%.0f s: centre %.2f °C, truth %.2f °C", sensor, at, got, want)
				}
				if s := f.Temperature(Surface, at); got <= s || f.Hottest(at) != got {
					t.Errorf("%v t=%.0f s: centre %.2f °C, surface %.2f °C, hottest %.2f °C", sensor, at, got, s, f.Hottest(at))
				}
			}
		}
	}
}

// The FV fit beats the constant-h series fit on a curve made with h(Ts): the
// series' systematic misfit shows in its RMSE.
func TestFitFVBeatsSeriesOnNonlinearH(t *testing.T) {
	sp := hotCylinder(Centre)
	tr := fvTruth(t, sp, 1, 600, 20, 4*3600)
	times, y := curve(func(t float64) float64 { return tr.At(Centre, t) }, 300, 4*3600, 0.2, 5)
	f, err := FitFV(sp, times, y, 20)
	if err != nil {
		t.Fatal(err)
	}
	if f.RMSE > 0.3 || f.Series.RMSE < 3*f.RMSE {
		t.Errorf("FV RMSE %.3f °C, series RMSE %.3f °C: want FV near the noise and the series well above", f.RMSE, f.Series.RMSE)
	}
}

func TestFitFVRejectsProductShapes(t *testing.T) {
	times, y := []float64{1, 2, 3, 4}, []float64{100, 90, 80, 70}
	for _, sp := range []Specimen{concrete(ShortCylinder, Centre), concrete(Cuboid, Centre)} {
		if _, err := FitFV(sp, times, y, 20); !errors.Is(err, ErrShape) {
			t.Errorf("%v: error %v, want ErrShape", sp.Shape, err)
		}
	}
	slab := concrete(Slab, Centre)
	slab.Length = 0
	if _, err := FitFV(slab, times, y, 20); !errors.Is(err, ErrSpecimen) {
		t.Errorf("slab without face height: error %v, want ErrSpecimen", err)
	}
}

// FVFit reports a covariance whose diagonal gives the standard errors, and Varied
// reruns the model: no change reproduces the fit, a larger h scale cools faster
// and an offset initial temperature shows at the start.
func TestFitFVVaried(t *testing.T) {
	sp := hotCylinder(Surface)
	until := 4 * 3600.0
	tr := fvTruth(t, sp, 1.3, 600, 20, 2*until)
	times, y := curve(func(t float64) float64 { return tr.At(Surface, t) }, 200, until, 0.3, 5)
	f, err := FitFV(sp, times, y, math.NaN())
	if err != nil {
		t.Fatal(err)
	}
	if f.Cov == nil || f.Cov.SymmetricDim() != 3 {
		t.Fatalf("covariance %v, want 3×3", f.Cov)
	}
	if got, want := math.Sqrt(f.Cov.At(1, 1)), f.Initial.StdErr; math.Abs(got-want) > 1e-12*want {
		t.Errorf("covariance gives T0 standard error %g, Initial.StdErr %g", got, want)
	}
	mid := until / 2
	same, err := f.Varied(nil)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := same.Temperature(Centre, mid), f.Temperature(Centre, mid); math.Abs(got-want) > 1e-9 {
		t.Errorf("unvaried: centre %.9f °C, fit %.9f °C", got, want)
	}
	faster, err := f.Varied([]float64{0.1})
	if err != nil {
		t.Fatal(err)
	}
	if got, base := faster.Temperature(Centre, mid), f.Temperature(Centre, mid); !(got < base-1) {
		t.Errorf("scale ×e^0.1: centre %.2f °C at %.0f s, want well below %.2f °C", got, mid, base)
	}
	hotter, err := f.Varied([]float64{0, 5})
	if err != nil {
		t.Fatal(err)
	}
	if got, base := hotter.Temperature(Centre, 0), f.Temperature(Centre, 0); math.Abs(got-base-5) > 1e-9 {
		t.Errorf("T0 + 5: centre at 0 s %.3f °C, fit %.3f °C", got, base)
	}
}
