package predict

import (
	"fmt"
	"math"

	"github.com/settle-lab/settle/internal/yamlfile"
	"github.com/settle-lab/settle/predict/material"
)

// Check checks a specimen as given, before a material name is resolved, and returns
// every problem joined with errors.Join, or nil. Each problem names its key path
// under the specimen ("shape", "material.name"), so that a specimen file and the
// specimen section of a configuration (config adds "channels[2].specimen.") say the
// same thing in the same words. It checks the shape and sensor names, positive
// sizes with the dimensions each shape needs, a material name against the built-in
// table and, without a name, all three properties, the emissivity, the finish and
// the convection.
func (s Specimen) Check() error {
	return yamlfile.Join(s.problems())
}

// problems is Check's list.
func (s Specimen) problems() []*yamlfile.Problem {
	var ps []*yamlfile.Problem
	add := func(key, format string, args ...any) {
		ps = append(ps, &yamlfile.Problem{Key: key, Msg: fmt.Sprintf(format, args...)})
	}
	if !knownShape(s.Shape) {
		add("shape", "want slab, cylinder, sphere, short-cylinder or block, got %q", s.Shape)
	}
	if !knownSensor(s.Sensor) {
		add("sensor", "want center or surface, got %q", s.Sensor)
	}
	if !positive(s.SizeM) {
		add("size_m", "must be a positive number of metres, got %g", s.SizeM)
	}
	dim := func(key string, v float64, need bool, why string) {
		switch {
		case !nonNegative(v):
			add(key, "must be zero or a positive number of metres, got %g", v)
		case need && v == 0:
			add(key, "%s (m)", why)
		}
	}
	dim("length_m", s.LengthM, needsLength(s.Shape), "a "+s.Shape+" needs its full length")
	dim("width_m", s.WidthM, s.Shape == "block", "a block needs its full width")
	if s.Shape != "block" && s.WidthM != 0 {
		add("width_m", "only a block has a width")
	}
	s.Material.problems(add)
	switch s.convectionFault() {
	case "convection":
		add("convection", "want still, moving or chamber, got %q", s.Air)
	case "chamber_c":
		if s.Air == ConvectionChamber {
			add("chamber_c", "convection: chamber needs the chamber's set temperature in °C")
		} else {
			add("chamber_c", "only convection: chamber has a set temperature (convection is %q)", s.Air)
		}
	}
	return ps
}

// problems adds the material's problems, under "material.".
func (m SpecimenMaterial) problems(add func(key, format string, args ...any)) {
	if _, ok := material.Lookup(m.Name); m.Name != "" && !ok {
		add("material.name", "no built-in material %q; give one of these names, or density_kg_m3, specific_heat_j_kgk and conductivity_w_mk:\n%s",
			m.Name, material.List("    "))
	}
	if m.Name == "" {
		for _, p := range []struct {
			name string
			v    float64
		}{{"density_kg_m3", m.Density}, {"specific_heat_j_kgk", m.SpecificHeat}, {"conductivity_w_mk", m.Conductivity}} {
			if !positive(p.v) {
				add("material."+p.name, "must be a positive number (or give material.name), got %g", p.v)
			}
		}
	}
	if !emissivityOK(m.Emissivity) {
		add("material.emissivity", "must be within 0..1, got %g", m.Emissivity)
	}
	switch m.Finish {
	case "", "bright", "oxidised", "oxidized":
		ref, named := material.Lookup(m.Name)
		switch {
		case m.Finish != "" && m.Name == "":
			add("material.finish", "a finish needs a built-in material.name (or give the emissivity)")
		case m.Finish != "" && named && !hasFinish(ref, m.Finish):
			add("material.finish", "%s has no %s finish (a metal is bright or oxidised; a non-metal only oxidised, its surface as found)", ref.Name, m.Finish)
		}
	default:
		add("material.finish", "want bright or oxidised, got %q", m.Finish)
	}
}

func hasFinish(m material.Material, finish string) bool {
	_, ok := m.Finish(finish)
	return ok
}

// The rules that Check (the words of a file) and Validate (the engine's own) share.

// knownShape reports whether shape is one of the shapes of Specimen.Shape.
func knownShape(shape string) bool {
	switch shape {
	case "slab", "cylinder", "sphere", "short-cylinder", "block":
		return true
	}
	return false
}

// knownSensor reports whether sensor is one of the positions of Specimen.Sensor.
func knownSensor(sensor string) bool { return sensor == "center" || sensor == "surface" }

// needsLength reports whether a shape needs length_m.
func needsLength(shape string) bool { return shape == "short-cylinder" || shape == "block" }

// positive reports whether v is a positive, finite number.
func positive(v float64) bool { return v > 0 && !math.IsInf(v, 0) }

// nonNegative reports whether v is zero or a positive, finite number.
func nonNegative(v float64) bool { return v >= 0 && !math.IsInf(v, 0) }

// emissivityOK reports whether e is within 0..1.
func emissivityOK(e float64) bool { return e >= 0 && e <= 1 }

// convectionFault names the key at fault in Air and ChamberC: "convection" for a
// setting that is not still, moving or chamber, "chamber_c" for a set temperature
// given without a chamber or a chamber without a possible one; "" when both are
// right.
func (s Specimen) convectionFault() string {
	switch s.Air {
	case "", ConvectionStill, ConvectionMoving:
		if s.ChamberC != nil {
			return "chamber_c"
		}
	case ConvectionChamber:
		if c := s.ChamberC; c == nil || math.IsNaN(*c) || math.IsInf(*c, 0) || *c < -273.15 {
			return "chamber_c"
		}
	default:
		return "convection"
	}
	return ""
}
