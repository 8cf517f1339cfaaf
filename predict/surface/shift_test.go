package surface

import (
	"math"
	"testing"
)

// TestConvectionKeepsItsValue: Convection, now computed through airConvAt, must give
// exactly (to the last bit) what the formula through the full property lookup gives,
// Nusselt's correlation from rayleigh(airAt) times k/L (the code path before
// airConvAt, kept here as the reference), and ConvectionShift's value must be that
// same number (NaN where the formula gives NaN: below absolute zero); at and between
// table rows, below and above the table.
func TestConvectionKeepsItsValue(t *testing.T) {
	for g := VerticalPlate; g <= Sphere; g++ {
		for _, l := range lengths {
			for _, amb := range []float64{-150, -20, 20, 26.85, 400} {
				for ts := amb - 300; ts < amb+2500; ts += 3.7 {
					if ts == amb {
						continue
					}
					filmK := filmKelvin(ts, amb)
					p, fac := airAt(filmK)
					want := nusseltFrom(g, rayleigh(p, filmK, l, math.Abs(ts-amb)), fac[g]) * p.K / l
					got := Convection(g, l, ts, amb)
					h, _ := ConvectionShift(g, l, ts, amb)
					if same := got == want && h == want; !same && !(math.IsNaN(want) && math.IsNaN(got) && math.IsNaN(h)) {
						t.Fatalf("%v L=%g %g °C in %g °C: Convection %.17g, ConvectionShift %.17g, formula %.17g", g, l, ts, amb, got, h, want)
					}
				}
			}
		}
	}
}

// TestShiftDerivatives: the shift derivatives of ConvectionShift and RadiationShift
// must match a central finite difference of Convection and Radiation (step 1e-3 K,
// taken where the film temperature stays inside one interval of the air table, so
// the difference quotient of the piecewise-linear properties is exact up to the
// curvature of the rest) to 1e-6 relative; and at Ts = T∞ = T the radiative
// derivative is d(4εσT³)/dT = 12εσT² (direct formula).
func TestShiftDerivatives(t *testing.T) {
	const step = 1e-3
	for g := VerticalPlate; g <= Sphere; g++ {
		for _, l := range lengths {
			for _, amb := range []float64{-20, 20, 150} {
				for ts := amb - 200; ts < amb+1500; ts += 6.1 {
					if ts == amb {
						continue
					}
					film := filmKelvin(ts, amb)
					if row := math.Round(film/50) * 50; math.Abs(film-row) < 2*step || film > 1000 {
						continue // straddles a row (or the 100 K rows' 1000 K seam)
					}
					h, dh := ConvectionShift(g, l, ts, amb)
					fd := (Convection(g, l, ts+step, amb+step) - Convection(g, l, ts-step, amb-step)) / (2 * step)
					if math.Abs(dh-fd) > 1e-6*math.Abs(fd)+1e-10*h { // 1e-10·h: the quotient's rounding
						t.Fatalf("%v L=%g %g °C in %g °C: dh/dx %.10g, finite difference %.10g", g, l, ts, amb, dh, fd)
					}
				}
			}
		}
	}
	for _, eps := range []float64{0.1, 0.9} {
		for _, c := range [][2]float64{{20, 20}, {600, 22}, {-30, 25}} {
			h, dh := RadiationShift(eps, c[0], c[1])
			if h != Radiation(eps, c[0], c[1]) {
				t.Errorf("RadiationShift(%g, %g, %g) value %g, Radiation %g", eps, c[0], c[1], h, Radiation(eps, c[0], c[1]))
			}
			fd := (Radiation(eps, c[0]+step, c[1]+step) - Radiation(eps, c[0]-step, c[1]-step)) / (2 * step)
			if relErr(dh, fd) > 1e-8 {
				t.Errorf("RadiationShift(%g, %g, %g) derivative %.10g, finite difference %.10g", eps, c[0], c[1], dh, fd)
			}
		}
		tk := 20 + ZeroCelsius
		if _, dh := RadiationShift(eps, 20, 20); relErr(dh, 12*eps*StefanBoltzmann*tk*tk) > 1e-14 {
			t.Errorf("ε=%g at 20 °C: derivative %.12g, 12εσT² %.12g", eps, dh, 12*eps*StefanBoltzmann*tk*tk)
		}
	}
	h, dh := CoefficientShift(Sphere, 0.04, 0.3, 300, 20)
	c, dc := ConvectionShift(Sphere, 0.04, 300, 20)
	r, dr := RadiationShift(0.3, 300, 20)
	if h != Coefficient(Sphere, 0.04, 0.3, 300, 20) || dh != dc+dr || h != c+r {
		t.Errorf("CoefficientShift %g, %g; parts %g+%g, %g+%g", h, dh, c, r, dc, dr)
	}
}

// ConvectionShift at ΔT = 0 and on bad inputs: 0 and 0 with no difference; NaN for an
// unknown geometry or a non-positive length, as Convection.
func TestConvectionShiftEdges(t *testing.T) {
	if h, dh := ConvectionShift(VerticalPlate, 0.1, 20, 20); h != 0 || dh != 0 {
		t.Errorf("ΔT = 0: %g, %g; want 0, 0", h, dh)
	}
	for _, c := range []struct {
		g Geometry
		l float64
	}{{Geometry(7), 0.1}, {VerticalPlate, 0}, {Sphere, -1}} {
		if h, dh := ConvectionShift(c.g, c.l, 50, 20); !math.IsNaN(h) || !math.IsNaN(dh) || !math.IsNaN(Convection(c.g, c.l, 50, 20)) {
			t.Errorf("%v L=%g: %g, %g; want NaN, NaN", c.g, c.l, h, dh)
		}
	}
}
