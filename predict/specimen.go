package predict

import (
	"errors"
	"fmt"
	"math"

	"github.com/settle-lab/settle/internal/yamlfile"
	"github.com/settle-lab/settle/predict/conduction"
	"github.com/settle-lab/settle/predict/material"
	"github.com/settle-lab/settle/predict/surface"
)

// Specimen describes a specimen's shape and material, so that the forecaster can use
// the temperature-dependent surface coefficient with the right geometry and report a
// Biot number. It is what `settle fit --specimen SPEC.yaml` reads, and the specimen
// section of a configuration's channel (config embeds it): the one schema of a
// specimen, its keys the mapstructure tags.
type Specimen struct {
	// Shape is "slab", "cylinder" (long), "sphere", "short-cylinder" (a cylinder of
	// finite length, ends cooled too) or "block" (a rectangular block).
	Shape string `mapstructure:"shape"`
	// SizeM is the half-thickness of a slab or block, or the radius of a cylinder,
	// short cylinder or sphere, m.
	SizeM float64 `mapstructure:"size_m"`
	// LengthM is a slab's or block's vertical height or a cylinder's length (full, not
	// half), m; unused for a sphere and required for a short cylinder and a block.
	// Zero means: a slab 10 times as high as it is thick; a long cylinder.
	LengthM float64 `mapstructure:"length_m"`
	// WidthM is a block's third side (full width), m; required for a block, unused
	// otherwise.
	WidthM float64 `mapstructure:"width_m"`
	// Sensor is where the thermocouple sits: "center" or "surface".
	Sensor string `mapstructure:"sensor"`
	// Material gives the properties, or names a built-in material.
	Material SpecimenMaterial `mapstructure:"material"`
	// Air (YAML key convection) says how the air around the specimen moves: "still" (natural
	// convection), "moving" (a fan, a draught: a constant convective coefficient),
	// or "chamber" (an oven, furnace or conditioning chamber held at ChamberC, with
	// circulating air and walls radiating at about that temperature). Empty: the
	// engine fits still and moving air and keeps the better by AIC, with a note.
	Air string `mapstructure:"convection"`
	// ChamberC is a chamber's set temperature, °C; required with Air "chamber",
	// not allowed otherwise.
	ChamberC *float64 `mapstructure:"chamber_c"`
}

// The settings of Specimen.Air.
const (
	ConvectionStill   = "still"
	ConvectionMoving  = "moving"
	ConvectionChamber = "chamber"
)

// convectionErr checks Air and ChamberC.
func (s Specimen) convectionErr() error {
	switch s.convectionFault() {
	case "convection":
		return fmt.Errorf("convection: %q is not still, moving or chamber", s.Air)
	case "chamber_c":
		if s.Air == ConvectionChamber {
			return fmt.Errorf("chamber_c: convection: chamber needs the chamber's set temperature in °C")
		}
		return fmt.Errorf("chamber_c: only a specimen with convection: chamber has a set temperature")
	}
	return nil
}

// SpecimenMaterial is a specimen's material: a built-in Name (predict/material), or
// the properties, or both (the properties given override the named ones).
type SpecimenMaterial struct {
	Name         string  `mapstructure:"name"`
	Density      float64 `mapstructure:"density_kg_m3"`
	SpecificHeat float64 `mapstructure:"specific_heat_j_kgk"`
	Conductivity float64 `mapstructure:"conductivity_w_mk"`
	Emissivity   float64 `mapstructure:"emissivity"`
	// Finish is a named material's surface, "bright" or "oxidised" (the default for
	// metals: as taken out of a furnace); it picks the emissivity when none is given.
	Finish string `mapstructure:"finish"`
}

// LoadSpecimen reads and checks a specimen YAML file. It reports every problem at
// once, each naming the file, the line and the key, in the words of `settle config
// check` (see ParseSpecimen).
func LoadSpecimen(path string) (Specimen, error) {
	data, err := yamlfile.ReadFile(path)
	if err != nil {
		return Specimen{}, err
	}
	return parseSpecimen(path, data)
}

// ParseSpecimen decodes a specimen from YAML, rejecting unknown keys, checks it
// (Check), resolves a named material and checks the result (Validate). Every problem
// of the file is reported at once, with its line and key: a YAML mistake, keys that
// differ only in case, unknown keys, values of the wrong type and the problems of
// Check, with key paths such as "material.name".
func ParseSpecimen(b []byte) (Specimen, error) {
	return parseSpecimen("", b)
}

// parseSpecimen is ParseSpecimen for a file; name stands for it in messages ("" for
// none).
func parseSpecimen(name string, data []byte) (Specimen, error) {
	s, err := decodeSpecimen(name, data)
	if err != nil {
		return Specimen{}, err
	}
	r, err := s.Resolved()
	if err != nil && name != "" {
		return Specimen{}, fmt.Errorf("%s: %w", name, err)
	}
	return r, err
}

// decodeSpecimen reads a specimen file's keys into a Specimen and checks it (Check),
// as given, with the line of every problem.
func decodeSpecimen(name string, data []byte) (Specimen, error) {
	t, problems := yamlfile.ReadTree(data)
	if problems != nil {
		return Specimen{}, yamlfile.InFile(name, problems)
	}
	raw, problems := yamlfile.Unmarshal(data)
	if problems != nil {
		return Specimen{}, yamlfile.InFile(name, problems)
	}
	switch raw.(type) {
	case nil:
		return Specimen{}, yamlfile.InFile(name, []*yamlfile.Problem{{Msg: "empty: a specimen needs shape, size_m, sensor and material"}})
	case map[string]any:
	default:
		return Specimen{}, yamlfile.InFile(name, []*yamlfile.Problem{{Line: 1, Msg: "a specimen file must be a mapping of keys (shape, size_m, length_m, width_m, sensor, material, convection, chamber_c)"}})
	}
	var s Specimen
	decoded := yamlfile.Decode(raw, &s)
	if problems := yamlfile.AfterDecode(decoded, s.problems()); len(problems) > 0 {
		return Specimen{}, yamlfile.InFile(name, t.Locate(problems, nil))
	}
	return s, nil
}

// Resolved returns the specimen with the properties it does not give filled from its
// named built-in material, checked (Validate). Give it a specimen that passes Check:
// its errors are the engine's own, for what Check leaves to it (a property given
// beside a material name, which overrides the table).
func (s Specimen) Resolved() (Specimen, error) {
	if err := s.resolve(); err != nil {
		return Specimen{}, err
	}
	if err := s.Validate(); err != nil {
		return Specimen{}, err
	}
	return s, nil
}

// resolve fills the properties not given from the named built-in material.
func (s *Specimen) resolve() error {
	m := &s.Material
	if m.Name == "" {
		if m.Finish != "" {
			return fmt.Errorf("material.finish: a finish needs a built-in material.name (or give the emissivity)")
		}
		return nil
	}
	ref, ok := material.Lookup(m.Name)
	if !ok {
		return fmt.Errorf("material.name: no built-in material %q; give one of these names, or density_kg_m3, specific_heat_j_kgk and conductivity_w_mk:\n%s", m.Name, material.List("    "))
	}
	fill := func(dst *float64, v float64) {
		if *dst == 0 {
			*dst = v
		}
	}
	fill(&m.Density, ref.Density)
	fill(&m.SpecificHeat, ref.SpecificHeat)
	fill(&m.Conductivity, ref.Conductivity)
	emis := ref.Emissivity
	if m.Finish != "" {
		r, ok := ref.Finish(m.Finish)
		if !ok {
			return fmt.Errorf("material.finish: %q is not a finish of %s (bright or oxidised for a metal; oxidised for a non-metal)", m.Finish, ref.Name)
		}
		emis = math.Round(100*r.Mid()) / 100
	}
	fill(&m.Emissivity, emis)
	return nil
}

// Validate checks the shape, sizes, sensor and properties; errors name the key.
func (s Specimen) Validate() error {
	pos := func(key string, v float64) error {
		if !positive(v) {
			return fmt.Errorf("%s: %g must be a positive number", key, v)
		}
		return nil
	}
	if !knownShape(s.Shape) {
		return fmt.Errorf("shape: %q is not slab, cylinder, sphere, short-cylinder or block", s.Shape)
	}
	if err := s.checkDimensions(); err != nil {
		return err
	}
	if !knownSensor(s.Sensor) {
		return fmt.Errorf("sensor: %q is not center or surface", s.Sensor)
	}
	m := s.Material
	return errors.Join(
		pos("size_m", s.SizeM),
		pos("material.density_kg_m3", m.Density),
		pos("material.specific_heat_j_kgk", m.SpecificHeat),
		pos("material.conductivity_w_mk", m.Conductivity),
		emissivityErr(m.Emissivity),
		s.convectionErr(),
	)
}

func emissivityErr(e float64) error {
	if !emissivityOK(e) {
		return fmt.Errorf("material.emissivity: %g is not within 0..1", e)
	}
	return nil
}

// checkDimensions checks length_m and width_m against the shape's needs.
func (s Specimen) checkDimensions() error {
	for _, d := range []struct {
		key string
		v   float64
	}{{"length_m", s.LengthM}, {"width_m", s.WidthM}} {
		if !nonNegative(d.v) {
			return fmt.Errorf("%s: %g must be zero or positive", d.key, d.v)
		}
	}
	if needsLength(s.Shape) && s.LengthM == 0 {
		return fmt.Errorf("length_m: a %s needs its length (full, m)", s.Shape)
	}
	if s.Shape == "block" && s.WidthM == 0 {
		return errors.New("width_m: a block needs its width (full, m)")
	}
	if s.Shape != "block" && s.WidthM != 0 {
		return fmt.Errorf("width_m: only a block has a width, not a %s", s.Shape)
	}
	return nil
}

// height returns the slab's height or the cylinder's length with its default.
func (s Specimen) height() float64 {
	if s.LengthM > 0 {
		return s.LengthM
	}
	if s.Shape == "slab" || s.Shape == "block" {
		return 10 * 2 * s.SizeM
	}
	return math.Inf(1)
}

// CharLength returns V/A, m: a slab's half-thickness (both faces exposed, edges
// neglected), r·L/(2(L+r)) for a cylinder with its ends, r/3 for a sphere, and
// abc/(2(ab+bc+ca)) for a block of full sides a, b, c.
func (s Specimen) CharLength() float64 {
	r := s.SizeM
	switch s.Shape {
	case "block":
		a, b, c := 2*r, s.LengthM, s.WidthM
		return a * b * c / (2 * (a*b + b*c + c*a))
	case "cylinder", "short-cylinder":
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
// predict/surface expects them: a slab or block stands as a vertical plate of its
// height, a cylinder (long or short) lies as a horizontal cylinder of its diameter,
// a sphere by its diameter.
func (s Specimen) Convection() (surface.Geometry, float64) {
	switch s.Shape {
	case "cylinder", "short-cylinder":
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

// Conduction returns the specimen as predict/conduction describes it, with
// half-dimensions: a slab keeps its face height for the convection correlation, a
// short cylinder's half-length and a block's half-sides come from length_m and
// width_m, and the sensor is the centre or the surface.
func (s Specimen) Conduction() (conduction.Specimen, error) {
	shape, err := conduction.ParseShape(s.Shape)
	if err != nil {
		return conduction.Specimen{}, fmt.Errorf("shape: %w", err)
	}
	m := s.Material
	c := conduction.Specimen{
		Shape: shape, Size: s.SizeM, Density: m.Density, SpecificHeat: m.SpecificHeat,
		Conductivity: m.Conductivity, Emissivity: m.Emissivity, Sensor: conduction.Centre,
	}
	if s.Sensor == "surface" {
		c.Sensor = conduction.Surface
	}
	if s.Air == ConvectionMoving || s.Air == ConvectionChamber {
		c.ForcedH = movingH[1] // the shape only: the fit scales h
	}
	switch shape {
	case conduction.Slab:
		c.Length = s.height()
	case conduction.ShortCylinder:
		c.Length = s.LengthM / 2
	case conduction.Cuboid:
		c.Length, c.Width = s.LengthM/2, s.WidthM/2
	}
	if err := c.Validate(); err != nil {
		return conduction.Specimen{}, err
	}
	return c, nil
}
