package conduction

import (
	"fmt"
	"math"
	"strings"
)

// Shape is a one-dimensional body with a closed-form series solution.
type Shape int

// The shapes. Lengths are the half-thickness L for Slab and the radius r0 for
// Cylinder and Sphere.
const (
	// Slab is a plane wall of half-thickness L, cooled on both faces.
	Slab Shape = iota
	// Cylinder is an infinitely long cylinder of radius r0.
	Cylinder
	// Sphere is a sphere of radius r0.
	Sphere
	// ShortCylinder is a cylinder of radius r0 and finite length, a product of
	// Cylinder and Slab. Only Specimen and the fits take it; the one-dimensional
	// functions (Eigenvalues, NewSeries, FV) do not.
	ShortCylinder
	// Cuboid is a rectangular block, a product of three slabs ("block" in specimen
	// files). Only Specimen and the fits take it.
	Cuboid
)

// String returns the shape's name: "slab", "cylinder" or "sphere".
func (s Shape) String() string {
	switch s {
	case Slab:
		return "slab"
	case Cylinder:
		return "cylinder"
	case Sphere:
		return "sphere"
	case ShortCylinder:
		return "short-cylinder"
	case Cuboid:
		return "block"
	}
	return fmt.Sprintf("Shape(%d)", int(s))
}

// ParseShape returns the shape named s: "slab" (or "plate", "wall"), "cylinder",
// "sphere", "short-cylinder" or "block" (or "cuboid"), ignoring case.
func ParseShape(s string) (Shape, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "slab", "plate", "wall":
		return Slab, nil
	case "cylinder":
		return Cylinder, nil
	case "sphere":
		return Sphere, nil
	case "short-cylinder", "short cylinder", "shortcylinder":
		return ShortCylinder, nil
	case "block", "cuboid":
		return Cuboid, nil
	}
	return 0, fmt.Errorf("conduction: unknown shape %q (want slab, cylinder, sphere, short-cylinder or block)", s)
}

// OneDimensional reports whether s is Slab, Cylinder or Sphere.
func (s Shape) OneDimensional() bool { return s >= Slab && s <= Sphere }

// LumpedFactor is V/(A·L) for the shape: the lumped length V/A divided by the
// series length (L or r0). It is 1 for Slab, 1/2 for Cylinder and 1/3 for Sphere,
// so the lumped-capacitance exponent t/τ = h·A·t/(ρ·c·V) equals Bi·Fo/LumpedFactor
// with this package's Bi and Fo. It is NaN for the product shapes, whose factor
// depends on their proportions (see Specimen.LumpedLength).
func (s Shape) LumpedFactor() float64 {
	switch s {
	case Cylinder:
		return 0.5
	case Sphere:
		return 1.0 / 3
	case Slab:
		return 1
	}
	return math.NaN()
}

func (s Shape) check() {
	if s < Slab || s > Sphere {
		panic(fmt.Sprintf("conduction: unknown shape %d", int(s)))
	}
}
