package conduction

import "fmt"

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
	}
	return fmt.Sprintf("Shape(%d)", int(s))
}

// LumpedFactor is V/(A·L) for the shape: the lumped length V/A divided by the
// series length (L or r0). It is 1 for Slab, 1/2 for Cylinder and 1/3 for Sphere,
// so the lumped-capacitance exponent t/τ = h·A·t/(ρ·c·V) equals Bi·Fo/LumpedFactor
// with this package's Bi and Fo.
func (s Shape) LumpedFactor() float64 {
	switch s {
	case Cylinder:
		return 0.5
	case Sphere:
		return 1.0 / 3
	}
	return 1
}

func (s Shape) check() {
	if s < Slab || s > Sphere {
		panic(fmt.Sprintf("conduction: unknown shape %d", int(s)))
	}
}
