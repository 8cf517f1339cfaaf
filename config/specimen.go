package config

import (
	"math"
	"strings"

	"github.com/settle-lab/settle/predict/material"
)

// Specimen describes the specimen on a channel, with the keys of a `settle fit
// --specimen` file (predict.Specimen): shape, size_m, length_m, width_m, sensor and
// material. predict resolves a material name and checks it against its table.
type Specimen struct {
	// Shape is slab, cylinder, sphere, short-cylinder or block.
	Shape string `mapstructure:"shape"`
	// SizeM is the half-thickness (slab, block) or the radius (cylinders, sphere), m.
	SizeM float64 `mapstructure:"size_m"`
	// LengthM is the full height of a slab or block or the full length of a
	// cylinder, m; needed for short-cylinder and block.
	LengthM float64 `mapstructure:"length_m"`
	// WidthM is the full width of a block, m; needed for a block, unused otherwise.
	WidthM float64 `mapstructure:"width_m"`
	// Sensor is center or surface.
	Sensor string `mapstructure:"sensor"`
	// Material names a built-in material or gives the properties (or both: the
	// properties given override the named ones).
	Material SpecimenMaterial `mapstructure:"material"`
	// Convection is how the air around the specimen moves: still, moving (a fan or a
	// draught) or chamber (an oven, furnace or conditioning chamber at ChamberC).
	// Empty: the forecaster considers still and moving air and chooses.
	Convection string `mapstructure:"convection"`
	// ChamberC is the chamber's set temperature, °C; required with convection
	// chamber, not allowed otherwise.
	ChamberC *float64 `mapstructure:"chamber_c"`
}

// SpecimenMaterial is a specimen's material: a built-in Name (predict/material)
// and/or the properties.
type SpecimenMaterial struct {
	// Name is a built-in material, e.g. "concrete" or "brass".
	Name string `mapstructure:"name"`
	// Density is ρ, kg/m³.
	Density float64 `mapstructure:"density_kg_m3"`
	// SpecificHeat is c, J/(kg·K).
	SpecificHeat float64 `mapstructure:"specific_heat_j_kgk"`
	// Conductivity is k, W/(m·K).
	Conductivity float64 `mapstructure:"conductivity_w_mk"`
	// Emissivity is the surface's total emissivity, 0–1.
	Emissivity float64 `mapstructure:"emissivity"`
	// Finish is a named material's surface, bright or oxidised (the default for
	// metals); it picks the emissivity when none is given.
	Finish string `mapstructure:"finish"`
}

// SpecimenProblems checks a channel's specimen, with key the channel's key path
// (e.g. "channels[2]"); nil s has no problems. It checks what needs no material
// table: the shape and sensor names, positive sizes with the dimensions each shape
// needs, and, without a material name, all three properties.
func SpecimenProblems(key string, s *Specimen) []*Problem {
	return specimenProblems(key+".specimen", s)
}

// specimenProblems checks a specimen whose keys sit under key ("" for a specimen
// file, whose keys are at the top).
func specimenProblems(key string, s *Specimen) []*Problem {
	if s == nil {
		return nil
	}
	k := &checker{}
	defer func() {
		for _, p := range k.problems {
			p.Key = strings.TrimPrefix(p.Key, ".") // the top of a specimen file
		}
	}()
	switch s.Shape {
	case "slab", "cylinder", "sphere", "short-cylinder", "block":
	default:
		k.add(key+".shape", "want slab, cylinder, sphere, short-cylinder or block, got %q", s.Shape)
	}
	switch s.Sensor {
	case "center", "surface":
	default:
		k.add(key+".sensor", "want center or surface, got %q", s.Sensor)
	}
	if !(s.SizeM > 0) || math.IsInf(s.SizeM, 0) {
		k.add(key+".size_m", "must be a positive number of metres, got %g", s.SizeM)
	}
	needLength := s.Shape == "short-cylinder" || s.Shape == "block"
	checkDim(k, key+".length_m", s.LengthM, needLength, "a "+s.Shape+" needs its full length")
	checkDim(k, key+".width_m", s.WidthM, s.Shape == "block", "a block needs its full width")
	if s.Shape != "block" && s.WidthM != 0 {
		k.add(key+".width_m", "only a block has a width")
	}
	m := s.Material
	if _, ok := material.Lookup(m.Name); m.Name != "" && !ok {
		k.add(key+".material.name", "no built-in material %q; give one of these names, or density_kg_m3, specific_heat_j_kgk and conductivity_w_mk:\n%s",
			m.Name, MaterialList("    "))
	}
	if m.Name == "" {
		for _, p := range []struct {
			name string
			v    float64
		}{{"density_kg_m3", m.Density}, {"specific_heat_j_kgk", m.SpecificHeat}, {"conductivity_w_mk", m.Conductivity}} {
			if !(p.v > 0) || math.IsInf(p.v, 0) {
				k.add(key+".material."+p.name, "must be a positive number (or give material.name), got %g", p.v)
			}
		}
	}
	if !(m.Emissivity >= 0 && m.Emissivity <= 1) {
		k.add(key+".material.emissivity", "must be within 0..1, got %g", m.Emissivity)
	}
	switch m.Finish {
	case "", "bright", "oxidised", "oxidized":
		ref, named := material.Lookup(m.Name)
		switch {
		case m.Finish != "" && m.Name == "":
			k.add(key+".material.finish", "a finish needs a built-in material.name (or give the emissivity)")
		case m.Finish != "" && named && !hasFinish(ref, m.Finish):
			k.add(key+".material.finish", "%s has no %s finish (a metal is bright or oxidised; a non-metal only oxidised, its surface as found)", ref.Name, m.Finish)
		}
	default:
		k.add(key+".material.finish", "want bright or oxidised, got %q", m.Finish)
	}
	convectionProblems(k, key, s)
	return k.problems
}

// convectionProblems checks convection and chamber_c.
func convectionProblems(k *checker, key string, s *Specimen) {
	switch s.Convection {
	case "", "still", "moving":
		if s.ChamberC != nil {
			k.add(key+".chamber_c", "only convection: chamber has a set temperature (convection is %q)", s.Convection)
		}
	case "chamber":
		if c := s.ChamberC; c == nil || math.IsNaN(*c) || math.IsInf(*c, 0) || *c < -273.15 {
			k.add(key+".chamber_c", "convection: chamber needs the chamber's set temperature in °C")
		}
	default:
		k.add(key+".convection", "want still, moving or chamber, got %q", s.Convection)
	}
}

// checkDim checks an optional (or, with need, required) positive dimension.
func checkDim(k *checker, key string, v float64, need bool, why string) {
	switch {
	case !(v >= 0) || math.IsInf(v, 0):
		k.add(key, "must be zero or a positive number of metres, got %g", v)
	case need && v == 0:
		k.add(key, "%s (m)", why)
	}
}

// Check returns the problems of SpecimenProblems joined with errors.Join, or nil.
// Config.Validate reports the same problems through SpecimenProblems.
func (s *Specimen) Check(key string) error {
	return joinProblems(SpecimenProblems(key, s))
}

func hasFinish(m material.Material, finish string) bool {
	_, ok := m.Finish(finish)
	return ok
}
