package surface

import (
	"strings"
	"testing"
)

// TestParseGeometry: every name String gives parses back; spelling variants parse;
// unknown names fail with an error quoting the input.
func TestParseGeometry(t *testing.T) {
	tests := []struct {
		in   string
		want Geometry
	}{
		{"vertical-plate", VerticalPlate},
		{" Vertical_Plate ", VerticalPlate},
		{"horizontal cylinder", HorizontalCylinder},
		{"HORIZONTAL-CYLINDER", HorizontalCylinder},
		{"sphere", Sphere},
	}
	for _, tc := range tests {
		got, err := ParseGeometry(tc.in)
		if err != nil || got != tc.want {
			t.Errorf("ParseGeometry(%q) = %v, %v; want %v", tc.in, got, err, tc.want)
		}
	}
	for g := VerticalPlate; g <= Sphere; g++ {
		if got, err := ParseGeometry(g.String()); err != nil || got != g {
			t.Errorf("ParseGeometry(%q) = %v, %v; want %v", g.String(), got, err, g)
		}
	}
	for _, bad := range []string{"", "plate", "cube", "sphere2"} {
		if _, err := ParseGeometry(bad); err == nil || !strings.Contains(err.Error(), "\""+bad+"\"") {
			t.Errorf("ParseGeometry(%q) error = %v, want one quoting the input", bad, err)
		}
	}
	if s := Geometry(5).String(); s != "Geometry(5)" {
		t.Errorf("Geometry(5).String() = %q", s)
	}
}

// FuzzParseGeometry: ParseGeometry never panics, returns only defined geometries, and
// whatever it accepts round-trips through String. Seeds in testdata/fuzz.
func FuzzParseGeometry(f *testing.F) {
	for _, s := range []string{"vertical-plate", "Sphere", "horizontal_cylinder", "", " \t"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		g, err := ParseGeometry(s)
		if err != nil {
			return
		}
		if !g.valid() {
			t.Fatalf("ParseGeometry(%q) = %d, not a defined geometry", s, int(g))
		}
		if back, err := ParseGeometry(g.String()); err != nil || back != g {
			t.Fatalf("round trip of %q: %v, %v", s, back, err)
		}
	})
}
