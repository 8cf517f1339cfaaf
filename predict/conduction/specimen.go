package conduction

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/settle-lab/settle/predict/surface"
)

// Position is where in a specimen a temperature is taken: a fraction x/L or r/r0
// in [0, 1] along the Size direction (0 the centre, 1 the surface), or VolumeMean.
// In the product shapes the other coordinates are at the mid-plane, so Surface is
// the middle of the side of a short cylinder and the middle of the face normal to
// Size of a block.
type Position float64

// The named positions.
const (
	// Centre is the centre (mid-plane of a slab, axis of a cylinder).
	Centre Position = 0
	// Surface is the cooled surface.
	Surface Position = 1
	// VolumeMean is the volume-mean temperature (the energy content).
	VolumeMean Position = -1
)

// ParsePosition returns the position named s: "centre" or "center", "surface",
// "mean", or a fraction in [0, 1].
func ParsePosition(s string) (Position, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "centre", "center", "core":
		return Centre, nil
	case "surface":
		return Surface, nil
	case "mean", "volume-mean":
		return VolumeMean, nil
	}
	f, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil || !(f >= 0 && f <= 1) {
		return 0, fmt.Errorf("conduction: unknown position %q (want centre, surface, mean or a fraction 0..1)", s)
	}
	return Position(f), nil
}

// String returns "centre", "surface", "mean" or the fraction.
func (p Position) String() string {
	switch p {
	case Centre:
		return "centre"
	case Surface:
		return "surface"
	case VolumeMean:
		return "mean"
	}
	return strconv.FormatFloat(float64(p), 'g', -1, 64)
}

func (p Position) valid() bool { return p == VolumeMean || (p >= 0 && p <= 1) }

// ErrSpecimen is matched (errors.Is) by every error Specimen.Validate returns.
var ErrSpecimen = errors.New("conduction: invalid specimen")

// Specimen is what the conduction models need to know about a specimen. Lengths
// are half-dimensions in metres, measured from the centre, because Bi and Fo are
// based on them.
type Specimen struct {
	// Shape is the body; all five shapes are allowed.
	Shape Shape
	// Size is the half-thickness L (Slab), the radius r0 (Cylinder, Sphere,
	// ShortCylinder) or the half-side Lx (Cuboid), m. Bi = h·Size/k, Fo = α·t/Size².
	Size float64
	// Length is the half-length of a ShortCylinder or the half-side Ly of a Cuboid,
	// m. For a Slab it is the full face height, used only by the convection
	// correlation of FitFV (vertical plate); other shapes ignore it.
	Length float64
	// Width is the half-side Lz of a Cuboid, m; other shapes ignore it.
	Width float64
	// Density is ρ, kg/m³.
	Density float64
	// SpecificHeat is c, J/(kg·K).
	SpecificHeat float64
	// Conductivity is k, W/(m·K).
	Conductivity float64
	// Emissivity is the surface's total emissivity (0–1), used by FitFV only.
	Emissivity float64
	// ForcedH, when positive, is a constant convective coefficient (moving air),
	// W/(m²·K), used by FitFV instead of natural convection; radiation is kept.
	ForcedH float64
	// Sensor is where the thermocouple is (Centre, Surface, VolumeMean or a fraction).
	Sensor Position
}

// Validate reports the first problem with the specimen, wrapped around ErrSpecimen.
func (sp Specimen) Validate() error {
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: %s", ErrSpecimen, fmt.Sprintf(format, a...))
	}
	switch {
	case sp.Shape < Slab || sp.Shape > Cuboid:
		return bad("unknown shape %d", int(sp.Shape))
	case !(sp.Size > 0) || math.IsInf(sp.Size, 0):
		return bad("size must be a positive length in metres, got %g", sp.Size)
	case (sp.Shape == ShortCylinder || sp.Shape == Cuboid) && !(sp.Length > 0 && !math.IsInf(sp.Length, 0)):
		return bad("a %v needs a positive length (half-length or half-side Ly), got %g", sp.Shape, sp.Length)
	case sp.Shape == Cuboid && !(sp.Width > 0 && !math.IsInf(sp.Width, 0)):
		return bad("a block needs a positive width (half-side Lz), got %g", sp.Width)
	case !(sp.Density > 0) || !(sp.SpecificHeat > 0) || !(sp.Conductivity > 0):
		return bad("density, specific heat and conductivity must be > 0, got %g, %g, %g",
			sp.Density, sp.SpecificHeat, sp.Conductivity)
	case !(sp.Emissivity >= 0 && sp.Emissivity <= 1):
		return bad("emissivity must lie in [0, 1], got %g", sp.Emissivity)
	case !sp.Sensor.valid():
		return bad("sensor position must be centre, surface, mean or a fraction in [0, 1], got %v", sp.Sensor)
	}
	return nil
}

// Diffusivity returns α = k/(ρ·c), m²/s.
func (sp Specimen) Diffusivity() float64 {
	return sp.Conductivity / (sp.Density * sp.SpecificHeat)
}

// Fo returns the Fourier number α·t/Size² at t seconds.
func (sp Specimen) Fo(seconds float64) float64 {
	return sp.Diffusivity() * seconds / (sp.Size * sp.Size)
}

// Biot returns Bi = h·Size/k for a surface coefficient h in W/(m²·K).
func (sp Specimen) Biot(h float64) float64 { return h * sp.Size / sp.Conductivity }

// H returns the surface coefficient h = Bi·k/Size, W/(m²·K), of a Biot number.
func (sp Specimen) H(bi float64) float64 { return bi * sp.Conductivity / sp.Size }

// LumpedLength returns V/A, m, the length of the lumped Biot number h·(V/A)/k.
func (sp Specimen) LumpedLength() float64 {
	r, l, w := sp.Size, sp.Length, sp.Width
	switch sp.Shape {
	case ShortCylinder: // V = 2π·r²·l, A = 4π·r·l + 2π·r²
		return r * l / (2*l + r)
	case Cuboid: // V = 8·r·l·w, A = 8·(r·l + l·w + r·w)
		return r * l * w / (r*l + l*w + r*w)
	}
	return r * sp.Shape.LumpedFactor()
}

// Convection returns the free-convection geometry and its characteristic length
// (m) for surface.Coefficient: a vertical plate of height Length for a Slab, a
// horizontal cylinder or a sphere of diameter 2·Size otherwise. The product shapes
// have no one-dimensional FV model and return an error, as does a Slab without a
// face height.
func (sp Specimen) Convection() (surface.Geometry, float64, error) {
	switch sp.Shape {
	case Slab:
		if !(sp.Length > 0) {
			return 0, 0, fmt.Errorf("%w: a slab needs its face height in Length for the convection correlation", ErrSpecimen)
		}
		return surface.VerticalPlate, sp.Length, nil
	case Cylinder:
		return surface.HorizontalCylinder, 2 * sp.Size, nil
	case Sphere:
		return surface.Sphere, 2 * sp.Size, nil
	}
	return 0, 0, fmt.Errorf("%w: no one-dimensional surface model for a %v", ErrShape, sp.Shape)
}
