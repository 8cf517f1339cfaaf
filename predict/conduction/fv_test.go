package conduction

import (
	"fmt"
	"math"
	"testing"
)

// unitFV is an FV model with Size = k = α = 1, so t is Fo and h is Bi, cooling from
// θi = 1 to an ambient of 0: its temperatures are θ/θi directly.
func unitFV(s Shape, bi float64, cells int) *FV {
	return &FV{Shape: s, Size: 1, Conductivity: 1, Diffusivity: 1, H: ConstantH(bi), Cells: cells}
}

// fineSteps is a time-step control fine enough that the time error is far below
// the space error of 48 cells, so grid refinement shows the space order alone.
var fineSteps = StepControl{Rate: 0.001, Growth: 1.02}

// fvError returns the largest |FV − series| of θ/θi at the centre, the surface and
// the volume mean over the given Fourier numbers.
func fvError(t *testing.T, s Shape, bi float64, cells int, steps StepControl, fos []float64) float64 {
	t.Helper()
	m := unitFV(s, bi, cells)
	m.Step = steps
	tr, err := m.Run(1, fos[len(fos)-1])
	if err != nil {
		t.Fatal(err)
	}
	se := NewSeries(s, bi, 0)
	worst := 0.0
	for _, fo := range fos {
		for _, p := range []Position{Centre, Surface, VolumeMean} {
			want := se.MeanTheta(fo)
			if p != VolumeMean {
				want = se.Theta(fo, float64(p))
			}
			worst = math.Max(worst, math.Abs(tr.At(p, fo)-want))
		}
	}
	return worst
}

// FV with a constant h against the exact series (this package's Series, itself
// checked against the handbook tables and worked examples of shared/reference
// sections 2.2–2.5), at the centre, the surface and the volume mean, Bi = 0.1, 1,
// 10, Fo from 0.05 to 2. Measured when written: with the default steps the largest
// error at 24 cells is 1.06e-3 of θi (sphere, Bi = 10), so the tolerance is 1.5e-3.
// With fine time steps, halving the cell size (12, 24, 48 cells) divides the error
// by about 4 (second order in space); each refinement must cut it by at least 3.
func TestFVAgainstSeries(t *testing.T) {
	fos := []float64{0.05, 0.1, 0.2, 0.5, 1, 2}
	for _, s := range shapes {
		for _, bi := range []float64{0.1, 1, 10} {
			t.Run(fmt.Sprintf("%v/Bi=%g", s, bi), func(t *testing.T) {
				e := fvError(t, s, bi, 24, StepControl{}, fos)
				t.Logf("max error 24 cells, default steps: %.2e", e)
				if e > 1.5e-3 {
					t.Errorf("24 cells, default steps: max error %.2e > 1.5e-3", e)
				}
				e12 := fvError(t, s, bi, 12, fineSteps, fos)
				e24 := fvError(t, s, bi, 24, fineSteps, fos)
				e48 := fvError(t, s, bi, 48, fineSteps, fos)
				t.Logf("max error 12/24/48 cells: %.2e %.2e %.2e", e12, e24, e48)
				if e12/e24 < 3 || e24/e48 < 3 {
					t.Errorf("no second-order convergence: %.2e, %.2e, %.2e", e12, e24, e48)
				}
			})
		}
	}
}

// At Bi = 0.01 the body is lumped (Bi < 0.1, common practice; DESIGN.md physics
// section 1): θ/θi = exp(−t/τ) with t/τ = Bi·Fo/LumpedFactor. The lumped solution is
// itself an approximation, off by O(Bi) in the exponent, so the tolerance is
// 0.5 % of θi over two time constants.
func TestFVAgainstLumped(t *testing.T) {
	const bi = 0.01
	for _, s := range shapes {
		until := 2 * s.LumpedFactor() / bi // two time constants
		tr, err := unitFV(s, bi, 0).Run(1, until)
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range []float64{0.1, 0.5, 1} {
			fo := f * until
			want := math.Exp(-bi * fo / s.LumpedFactor())
			for _, p := range []Position{Centre, Surface, VolumeMean} {
				if got := tr.At(p, fo); !near(got, want, 5e-3) {
					t.Errorf("%v Fo=%g %v: FV %.5f, lumped %.5f", s, fo, p, got, want)
				}
			}
		}
	}
}

// lumpedODE integrates ρcV·dT/dt = −A·h(T)·(T − T∞) (the lumped model with a
// temperature-dependent h, DESIGN.md physics section 2) by classical fourth-order
// Runge–Kutta with n steps to until, returning T(until).
func lumpedODE(h func(float64) float64, lc, rhoC, t0, amb, until float64, n int) float64 {
	f := func(T float64) float64 { return -h(T) * (T - amb) / (rhoC * lc) }
	T, dt := t0, until/float64(n)
	for range n {
		k1 := f(T)
		k2 := f(T + dt/2*k1)
		k3 := f(T + dt/2*k2)
		k4 := f(T + dt*k3)
		T += dt / 6 * (k1 + 2*k2 + 2*k3 + k4)
	}
	return T
}

// FV with the nonlinear h(Ts) of the forecasting engine (natural convection plus
// radiation from predict/surface) against the lumped ODE with the same h(T), on a
// small aluminium sphere (Bi ≈ 0.002): the lumped model holds (Bi < 0.1, common
// practice), so centre, surface and mean agree with it to 0.3 °C over a cooling from
// 400 °C to about 40 °C. Properties: aluminium alloy, the material table's values
// written out here.
func TestFVNonlinearAgainstLumpedODE(t *testing.T) {
	sp := Specimen{Shape: Sphere, Size: 0.02, Density: 2700, SpecificHeat: 900, Conductivity: 200, Emissivity: 0.8}
	const t0, amb = 400.0, 20.0
	h := NaturalH(sp, 1, amb)
	m := &FV{Shape: Sphere, Size: sp.Size, Conductivity: sp.Conductivity, Diffusivity: sp.Diffusivity(), Ambient: amb, H: h}
	const until = 3000.0
	tr, err := m.Run(t0, until)
	if err != nil {
		t.Fatal(err)
	}
	if bi := sp.Biot(h(t0)); bi > 0.01 {
		t.Fatalf("test premise: Bi = %g should be small", bi)
	}
	for _, at := range []float64{300, 1000, until} {
		want := lumpedODE(h, sp.LumpedLength(), sp.Density*sp.SpecificHeat, t0, amb, at, 3000)
		for _, p := range []Position{Centre, Surface, VolumeMean} {
			if got := tr.At(p, at); !near(got, want, 0.3) {
				t.Errorf("t=%g s %v: FV %.2f °C, lumped ODE %.2f °C", at, p, got, want)
			}
		}
	}
	if end := tr.At(Centre, until); end > 80 || end < 25 {
		t.Errorf("test premise: end temperature %.1f °C should be well into the cooling", end)
	}
}

// The trajectory is exact at its nodes and steps; At extrapolates toward ambient.
func TestTrajectoryExtrapolates(t *testing.T) {
	m := &FV{Shape: Slab, Size: 1, Conductivity: 1, Diffusivity: 1, Ambient: 10, H: ConstantH(1)}
	tr, err := m.Run(110, 1)
	if err != nil {
		t.Fatal(err)
	}
	se := NewSeries(Slab, 1, 0)
	for _, fo := range []float64{1.5, 3} {
		want := 10 + 100*se.Theta(fo, 0)
		if got := tr.At(Centre, fo); !near(got, want, 0.5) {
			t.Errorf("Fo=%g extrapolated %.3f, series %.3f", fo, got, want)
		}
	}
}

func TestFVRejectsBadModels(t *testing.T) {
	for name, m := range map[string]*FV{
		"block":   {Shape: Cuboid, Size: 1, Conductivity: 1, Diffusivity: 1, H: ConstantH(1)},
		"no H":    {Shape: Slab, Size: 1, Conductivity: 1, Diffusivity: 1},
		"size 0":  {Shape: Slab, Conductivity: 1, Diffusivity: 1, H: ConstantH(1)},
		"1 cell":  {Shape: Slab, Size: 1, Conductivity: 1, Diffusivity: 1, H: ConstantH(1), Cells: 1},
		"NaN amb": {Shape: Slab, Size: 1, Conductivity: 1, Diffusivity: 1, H: ConstantH(1), Ambient: math.NaN()},
	} {
		if _, err := m.Run(1, 1); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}
