package predict

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"

	"go.yaml.in/yaml/v3"

	"github.com/settle-lab/settle/predict/material"
	"github.com/settle-lab/settle/predict/surface"
)

// Specimen describes a specimen's shape and material, so that the forecaster can use
// the temperature-dependent surface coefficient with the right geometry and report a
// Biot number. It is what `settle fit --specimen SPEC.yaml` reads.
type Specimen struct {
	// Shape is "slab", "cylinder" or "sphere".
	Shape string `yaml:"shape"`
	// SizeM is the half-thickness of a slab or the radius of a cylinder or sphere, m.
	SizeM float64 `yaml:"size_m"`
	// LengthM is a slab's vertical height or a horizontal cylinder's length, m (unused
	// for a sphere). Zero means: a slab 10 times as high as it is thick; a long
	// cylinder.
	LengthM float64 `yaml:"length_m"`
	// Sensor is where the thermocouple sits: "center" or "surface".
	Sensor string `yaml:"sensor"`
	// Material gives the properties, or names a built-in material.
	Material SpecimenMaterial `yaml:"material"`
}

// SpecimenMaterial is a specimen's material: a built-in Name (predict/material), or
// the properties, or both (the properties given override the named ones).
type SpecimenMaterial struct {
	Name         string  `yaml:"name"`
	Density      float64 `yaml:"density_kg_m3"`
	SpecificHeat float64 `yaml:"specific_heat_j_kgk"`
	Conductivity float64 `yaml:"conductivity_w_mk"`
	Emissivity   float64 `yaml:"emissivity"`
}

// LoadSpecimen reads and checks a specimen YAML file; errors name the file and key.
func LoadSpecimen(path string) (Specimen, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return Specimen{}, fmt.Errorf("predict: specimen: %w", err)
	}
	s, err := ParseSpecimen(b)
	if err != nil {
		return Specimen{}, fmt.Errorf("predict: specimen %s: %w", path, err)
	}
	return s, nil
}

// ParseSpecimen decodes a specimen from YAML, rejecting unknown keys, resolves a
// named material and checks the values; errors name the key.
func ParseSpecimen(b []byte) (Specimen, error) {
	var s Specimen
	dec := yaml.NewDecoder(bytes.NewReader(b))
	dec.KnownFields(true)
	if err := dec.Decode(&s); err != nil {
		return Specimen{}, fmt.Errorf("decode: %w", err)
	}
	if err := s.resolve(); err != nil {
		return Specimen{}, err
	}
	return s, s.Validate()
}

// resolve fills the properties not given from the named built-in material.
func (s *Specimen) resolve() error {
	m := &s.Material
	if m.Name == "" {
		return nil
	}
	ref, ok := material.Lookup(m.Name)
	if !ok {
		return fmt.Errorf("material.name: unknown material %q (known: %v)", m.Name, material.Names())
	}
	fill := func(dst *float64, v float64) {
		if *dst == 0 {
			*dst = v
		}
	}
	fill(&m.Density, ref.Density)
	fill(&m.SpecificHeat, ref.SpecificHeat)
	fill(&m.Conductivity, ref.Conductivity)
	fill(&m.Emissivity, ref.Emissivity)
	return nil
}

// Validate checks the shape, sizes, sensor and properties; errors name the key.
func (s Specimen) Validate() error {
	pos := func(key string, v float64) error {
		if !(v > 0) || math.IsInf(v, 0) {
			return fmt.Errorf("%s: %g must be a positive number", key, v)
		}
		return nil
	}
	switch s.Shape {
	case "slab", "cylinder", "sphere":
	default:
		return fmt.Errorf("shape: %q is not slab, cylinder or sphere", s.Shape)
	}
	switch s.Sensor {
	case "center", "surface":
	default:
		return fmt.Errorf("sensor: %q is not center or surface", s.Sensor)
	}
	if !(s.LengthM >= 0) || math.IsInf(s.LengthM, 0) {
		return fmt.Errorf("length_m: %g must be zero or positive", s.LengthM)
	}
	m := s.Material
	return errors.Join(
		pos("size_m", s.SizeM),
		pos("material.density_kg_m3", m.Density),
		pos("material.specific_heat_j_kgk", m.SpecificHeat),
		pos("material.conductivity_w_mk", m.Conductivity),
		emissivityErr(m.Emissivity),
	)
}

func emissivityErr(e float64) error {
	if !(e >= 0 && e <= 1) {
		return fmt.Errorf("material.emissivity: %g is not within 0..1", e)
	}
	return nil
}

// height returns the slab's height or the cylinder's length with its default.
func (s Specimen) height() float64 {
	if s.LengthM > 0 {
		return s.LengthM
	}
	if s.Shape == "slab" {
		return 10 * 2 * s.SizeM
	}
	return math.Inf(1)
}

// CharLength returns V/A, m: a slab's half-thickness (both faces exposed, edges
// neglected), r·L/(2(L+r)) for a cylinder with its ends, r/3 for a sphere.
func (s Specimen) CharLength() float64 {
	r := s.SizeM
	switch s.Shape {
	case "cylinder":
		if l := s.height(); !math.IsInf(l, 0) {
			return r * l / (2 * (l + r))
		}
		return r / 2
	case "sphere":
		return r / 3
	}
	return r
}

// Convection returns the free-convection geometry and its characteristic length as
// predict/surface expects them: a slab stands as a vertical plate of its height, a
// cylinder lies as a horizontal cylinder of its diameter, a sphere by its diameter.
func (s Specimen) Convection() (surface.Geometry, float64) {
	switch s.Shape {
	case "cylinder":
		return surface.HorizontalCylinder, 2 * s.SizeM
	case "sphere":
		return surface.Sphere, 2 * s.SizeM
	}
	return surface.VerticalPlate, s.height()
}

// HeatCapacityPerArea returns ρ·c·V/A, J/(m²·K).
func (s Specimen) HeatCapacityPerArea() float64 {
	return s.Material.Density * s.Material.SpecificHeat * s.CharLength()
}

// Biot returns h·Lc/k for a surface coefficient h, W/(m²·K).
func (s Specimen) Biot(h float64) float64 {
	return h * s.CharLength() / s.Material.Conductivity
}
