package surface

import (
	"fmt"
	"strings"
)

// Geometry is the shape whose free-convection correlation applies.
type Geometry int

// The supported geometries. The characteristic length passed as lengthM is the plate
// height for VerticalPlate and the diameter for HorizontalCylinder and Sphere.
const (
	// VerticalPlate is an isothermal vertical plate (or a vertical cylinder thick enough
	// to be one); lengthM is its height L.
	VerticalPlate Geometry = iota
	// HorizontalCylinder is a long isothermal horizontal cylinder; lengthM is its
	// diameter D.
	HorizontalCylinder
	// Sphere is an isothermal sphere; lengthM is its diameter D.
	Sphere
)

var geometryNames = [...]string{
	VerticalPlate:      "vertical-plate",
	HorizontalCylinder: "horizontal-cylinder",
	Sphere:             "sphere",
}

// String returns the geometry's name as ParseGeometry accepts it, e.g. "vertical-plate".
func (g Geometry) String() string {
	if g < 0 || int(g) >= len(geometryNames) {
		return fmt.Sprintf("Geometry(%d)", int(g))
	}
	return geometryNames[g]
}

// valid reports whether g is one of the defined geometries.
func (g Geometry) valid() bool { return g >= 0 && int(g) < len(geometryNames) }

// ParseGeometry returns the geometry named s: "vertical-plate", "horizontal-cylinder" or
// "sphere". Case, surrounding space, and '_' or ' ' in place of '-' are accepted.
func ParseGeometry(s string) (Geometry, error) {
	norm := strings.ToLower(strings.TrimSpace(s))
	norm = strings.NewReplacer("_", "-", " ", "-").Replace(norm)
	for g, name := range geometryNames {
		if norm == name {
			return Geometry(g), nil
		}
	}
	return 0, fmt.Errorf("surface: unknown geometry %q (want vertical-plate, horizontal-cylinder or sphere)", s)
}
