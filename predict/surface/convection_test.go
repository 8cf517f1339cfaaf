package surface

import (
	"errors"
	"math"
	"strings"
	"testing"
)

var lengths = []float64{0.005, 0.02, 0.1, 0.5, 2}

// TestConvectionGrowsWithDeltaT: with the ambient fixed, natural convection strictly
// grows with the temperature difference up to ΔT = 500 K for every geometry and
// length from 5 mm to 2 m (beyond about 600 K, for large Ra, the film-temperature
// properties make it level off and fall slowly; the next test covers the total).
func TestConvectionGrowsWithDeltaT(t *testing.T) {
	for g := VerticalPlate; g <= Sphere; g++ {
		for _, l := range lengths {
			prev := 0.0
			for dT := 0.25; dT <= 500; dT += 0.25 {
				h := Convection(g, l, 20+dT, 20)
				if !(h > prev) {
					t.Fatalf("%v L=%g m: h(ΔT=%g K) = %g not above h(ΔT=%g K) = %g", g, l, dT, h, dT-0.25, prev)
				}
				prev = h
			}
		}
	}
}

// TestCoefficientGrowsWithDeltaT: convection plus radiation strictly grows with the
// surface temperature up to 1000 °C, even for a polished surface (ε = 0.05).
func TestCoefficientGrowsWithDeltaT(t *testing.T) {
	for g := VerticalPlate; g <= Sphere; g++ {
		for _, l := range lengths {
			for _, eps := range []float64{0.05, 0.9} {
				prev := 0.0
				for ts := 20.5; ts <= 1000; ts += 0.5 {
					h := Coefficient(g, l, eps, ts, 20)
					if !(h > prev) {
						t.Fatalf("%v L=%g m ε=%g: h(%g °C) = %g not above h(%g °C) = %g", g, l, eps, ts, h, ts-0.5, prev)
					}
					prev = h
				}
			}
		}
	}
}

// TestConvectionMatchesNusselt: Convection equals Nusselt(Rayleigh)·k/L up to the
// interpolated Prandtl factor (< 1e-5 relative), and exactly at table rows.
func TestConvectionMatchesNusselt(t *testing.T) {
	for g := VerticalPlate; g <= Sphere; g++ {
		for _, l := range lengths {
			for ts := 21.0; ts < 1800; ts += 7.3 {
				Ra, Pr := Rayleigh(g, l, ts, 20)
				want := Nusselt(g, Ra, Pr) * Air(filmKelvin(ts, 20)).K / l
				if got := Convection(g, l, ts, 20); relErr(got, want) > 1e-5 {
					t.Errorf("%v L=%g ts=%g: Convection %g, Nusselt·k/L %g (rel %.2g)", g, l, ts, got, want, relErr(got, want))
				}
			}
		}
		// Tf = 500 K exactly: Ts = 2·(500 − 273.15) − 20.
		ts := 2*(500-ZeroCelsius) - 20
		Ra, Pr := Rayleigh(g, 0.1, ts, 20)
		want := Nusselt(g, Ra, Pr) * Air(500).K / 0.1
		if got := Convection(g, 0.1, ts, 20); relErr(got, want) > 1e-14 {
			t.Errorf("%v at a table row: Convection %g, Nusselt·k/L %g", g, got, want)
		}
	}
}

// TestRayleighDefinition checks Rayleigh against Ra = g·β·ΔT·L³/(ν·α) with β = 1/Tf and
// the properties from Air at the film temperature.
func TestRayleighDefinition(t *testing.T) {
	const l, ts, ta = 0.05, 150.0, 20.0
	tf := (ts+ta)/2 + 273.15
	p := Air(tf)
	want := 9.80665 / tf * (ts - ta) * l * l * l / (p.Nu * p.Alpha)
	Ra, Pr := Rayleigh(Sphere, l, ts, ta)
	if relErr(Ra, want) > 1e-12 || Pr != p.Pr {
		t.Errorf("Rayleigh = (%g, %g), want (%g, %g)", Ra, Pr, want, p.Pr)
	}
	if Ra0, _ := Rayleigh(Sphere, l, ta, ta); Ra0 != 0 {
		t.Errorf("Rayleigh at ΔT = 0 = %g, want 0", Ra0)
	}
	if RaN, _ := Rayleigh(Sphere, 0, ts, ta); !math.IsNaN(RaN) {
		t.Errorf("Rayleigh with L = 0 = %g, want NaN", RaN)
	}
}

// TestNusseltConductionLimit: at Ra = 0 the correlations reduce to their constants:
// 0.825² (plate), 0.60² (cylinder), 2 (sphere, pure conduction to infinite still air).
func TestNusseltConductionLimit(t *testing.T) {
	want := map[Geometry]float64{VerticalPlate: 0.825 * 0.825, HorizontalCylinder: 0.36, Sphere: 2}
	for g, w := range want {
		if got := Nusselt(g, 0, 0.7); relErr(got, w) > 1e-14 {
			t.Errorf("Nusselt(%v, 0, 0.7) = %g, want %g", g, got, w)
		}
	}
}

// TestBadInputs: nonsense inputs give NaN rather than a plausible number.
func TestBadInputs(t *testing.T) {
	nan := []struct {
		name string
		got  float64
	}{
		{"Nusselt negative Ra", Nusselt(VerticalPlate, -1, 0.7)},
		{"Nusselt zero Pr", Nusselt(Sphere, 1e6, 0)},
		{"Nusselt unknown geometry", Nusselt(Geometry(7), 1e6, 0.7)},
		{"Convection zero length", Convection(Sphere, 0, 100, 20)},
		{"Convection zero length, ΔT = 0", Convection(Sphere, 0, 20, 20)},
		{"Convection unknown geometry", Convection(Geometry(-1), 0.1, 100, 20)},
		{"Convection NaN surface", Convection(VerticalPlate, 0.1, math.NaN(), 20)},
	}
	for _, c := range nan {
		if !math.IsNaN(c.got) {
			t.Errorf("%s = %g, want NaN", c.name, c.got)
		}
	}
}

// TestSpherePrFactorNear07 backs sphereMinPr: the sphere correlation's Pr factor at
// Pr = 0.68 is within 0.4 % of its value at the stated limit Pr = 0.7 (computed).
func TestSpherePrFactorNear07(t *testing.T) {
	if e := relErr(prFactor(Sphere, sphereMinPr), prFactor(Sphere, 0.7)); e > 0.004 {
		t.Errorf("sphere Pr factor at %g differs from Pr = 0.7 by %.3g > 0.4 %%", sphereMinPr, e)
	}
	for tK := MinFilmK; tK <= MaxFilmK; tK += 10 {
		if Air(tK).Pr < sphereMinPr {
			t.Errorf("air Pr %g at %g K below sphereMinPr %g: Check would flag every hot sphere", Air(tK).Pr, tK, sphereMinPr)
		}
	}
}

// TestValidity covers the ranges of shared/reference section 3.2: NC1 all Ra; NC3
// 1e-5 <= Ra <= 1e12 (VERIFIED); NC4 Ra <= 1e11, Pr >= 0.7 (PARTIAL; air to 0.68).
func TestValidity(t *testing.T) {
	tests := []struct {
		g        Geometry
		Ra, Pr   float64
		quantity string // "" when valid
	}{
		{VerticalPlate, 1e14, 0.7, ""},
		{VerticalPlate, 1e-3, 0.7, ""},
		{VerticalPlate, 1e6, 0, "Pr"},
		{VerticalPlate, -1, 0.7, "Ra"},
		{VerticalPlate, math.NaN(), 0.7, "Ra"},
		{HorizontalCylinder, 1e12, 0.7, ""},
		{HorizontalCylinder, 1.01e12, 0.7, "Ra"},
		{HorizontalCylinder, 1e-6, 0.7, "Ra"},
		{HorizontalCylinder, 0, 0.7, ""},
		{Sphere, 1e11, 0.7, ""},
		{Sphere, 2e11, 0.7, "Ra"},
		{Sphere, 1e6, 0.683, ""},
		{Sphere, 1e6, 0.6, "Pr"},
	}
	for _, tc := range tests {
		err := Validity(tc.g, tc.Ra, tc.Pr)
		if tc.quantity == "" {
			if err != nil {
				t.Errorf("Validity(%v, %g, %g) = %v, want nil", tc.g, tc.Ra, tc.Pr, err)
			}
			continue
		}
		var re *RangeError
		if !errors.As(err, &re) || re.Quantity != tc.quantity || re.Geometry != tc.g {
			t.Errorf("Validity(%v, %g, %g) = %v, want a RangeError on %s", tc.g, tc.Ra, tc.Pr, err, tc.quantity)
			continue
		}
		if !errors.Is(err, ErrOutOfRange) || !strings.Contains(err.Error(), tc.g.String()) {
			t.Errorf("Validity(%v, %g, %g) = %q: want ErrOutOfRange naming the geometry", tc.g, tc.Ra, tc.Pr, err)
		}
	}
	if err := Validity(Geometry(9), 1e6, 0.7); err == nil || errors.Is(err, ErrOutOfRange) {
		t.Errorf("Validity(unknown geometry) = %v, want a non-range error", err)
	}
}

// TestCheck: Check flags the film temperature outside the air table and the Ra range,
// and passes an ordinary case.
func TestCheck(t *testing.T) {
	if err := Check(Sphere, 0.05, 300, 20); err != nil {
		t.Errorf("Check(sphere 50 mm, 300 °C) = %v, want nil", err)
	}
	err := Check(VerticalPlate, 0.1, 2500, 20)
	if !errors.Is(err, ErrOutOfRange) || !strings.Contains(err.Error(), "film temperature") {
		t.Errorf("Check(film ~1530 K) = %v, want a film-temperature RangeError", err)
	}
	err = Check(Sphere, 4, 400, 20) // Ra ≈ 2.5e11, above 1e11
	if !errors.Is(err, ErrOutOfRange) || !strings.Contains(err.Error(), "Ra") {
		t.Errorf("Check(sphere 4 m, 400 °C) = %v, want an Ra RangeError", err)
	}
	if err := Check(Sphere, 0, 400, 20); err == nil || !strings.Contains(err.Error(), "length") {
		t.Errorf("Check(length 0) = %v, want an error naming the length", err)
	}
}
