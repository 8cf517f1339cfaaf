package conduction

import (
	"errors"
	"math"
	"testing"
)

func TestParseShapeAndPosition(t *testing.T) {
	for _, s := range []Shape{Slab, Cylinder, Sphere, ShortCylinder, Cuboid} {
		got, err := ParseShape(s.String())
		if err != nil || got != s {
			t.Errorf("ParseShape(%q) = %v, %v", s.String(), got, err)
		}
	}
	if _, err := ParseShape("torus"); err == nil {
		t.Error("ParseShape(torus): no error")
	}
	for in, want := range map[string]Position{"center": Centre, "Centre": Centre, "surface": Surface, "mean": VolumeMean, "0.5": 0.5} {
		if got, err := ParsePosition(in); err != nil || got != want {
			t.Errorf("ParsePosition(%q) = %v, %v; want %v", in, got, err, want)
		}
	}
	for _, in := range []string{"", "edge", "1.5", "-0.1", "NaN"} {
		if _, err := ParsePosition(in); err == nil {
			t.Errorf("ParsePosition(%q): no error", in)
		}
	}
}

// A parsed position always round-trips through String and is valid.
func FuzzParsePosition(f *testing.F) {
	for _, s := range []string{"centre", "surface", "mean", "0.25", "1", "1e-3", " core ", "x"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		p, err := ParsePosition(s)
		if err != nil {
			return
		}
		if !p.valid() {
			t.Fatalf("ParsePosition(%q) = %v, not valid", s, p)
		}
		if q, err := ParsePosition(p.String()); err != nil || q != p {
			t.Fatalf("round trip of %q: %v → %q → %v, %v", s, p, p.String(), q, err)
		}
	})
}

// ParseShape never panics and returns a shape whose name parses back to it.
func FuzzParseShape(f *testing.F) {
	for _, s := range []string{"slab", "short-cylinder", "block", "Sphere", "cube"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		sh, err := ParseShape(s)
		if err != nil {
			return
		}
		if back, err := ParseShape(sh.String()); err != nil || back != sh {
			t.Fatalf("%q → %v → %v, %v", s, sh, back, err)
		}
	})
}

// V/A of each shape, from the shape's own formulas (geometry, no outside source).
func TestLumpedLength(t *testing.T) {
	cases := []struct {
		sp   Specimen
		want float64
	}{
		{Specimen{Shape: Slab, Size: 0.02}, 0.02},
		{Specimen{Shape: Cylinder, Size: 0.02}, 0.01},
		{Specimen{Shape: Sphere, Size: 0.03}, 0.01},
		// r = 1, half-length 1: V = 2π, A = 4π + 2π → V/A = 1/3.
		{Specimen{Shape: ShortCylinder, Size: 1, Length: 1}, 1.0 / 3},
		// cube of half-side 1: V = 8, A = 24 → 1/3.
		{Specimen{Shape: Cuboid, Size: 1, Length: 1, Width: 1}, 1.0 / 3},
	}
	for _, c := range cases {
		if got := c.sp.LumpedLength(); !near(got, c.want, 1e-15) {
			t.Errorf("%v: V/A = %g, want %g", c.sp.Shape, got, c.want)
		}
	}
	if !math.IsNaN(ShortCylinder.LumpedFactor()) {
		t.Error("LumpedFactor of a product shape should be NaN")
	}
}

func TestSpecimenValidate(t *testing.T) {
	good := concrete(Cuboid, Surface)
	if err := good.Validate(); err != nil {
		t.Fatal(err)
	}
	for name, edit := range map[string]func(*Specimen){
		"shape":      func(s *Specimen) { s.Shape = 9 },
		"size":       func(s *Specimen) { s.Size = 0 },
		"length":     func(s *Specimen) { s.Length = -1 },
		"width":      func(s *Specimen) { s.Width = math.Inf(1) },
		"density":    func(s *Specimen) { s.Density = 0 },
		"emissivity": func(s *Specimen) { s.Emissivity = 1.2 },
		"sensor":     func(s *Specimen) { s.Sensor = 2 },
	} {
		sp := good
		edit(&sp)
		if err := sp.Validate(); !errors.Is(err, ErrSpecimen) {
			t.Errorf("%s: error %v, want ErrSpecimen", name, err)
		}
	}
}
