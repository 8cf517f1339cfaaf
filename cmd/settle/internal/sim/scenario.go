package sim

import (
	"fmt"
	"math"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict/material"
	"github.com/settle-lab/settle/predict/surface"
)

// Demo defaults. At DemoSpeed 60 and DefaultInterval 2 s the logger sends 30 lines per
// wall second, so the fitter has its first ten points within a wall second and every
// specimen has a forecast long before 60 s of wall time. One wall minute is one
// physical hour: the tile reaches the 50 °C handling target after about 13 s of wall
// time, the plate after 26 s, the steel after 48 s and the brass sphere after 83 s;
// all are settled (within 2 °C of ambient) after about 4 minutes.
const (
	// DemoSpeed is the demo's time-lapse factor (physical seconds per wall second).
	DemoSpeed = 60
	// DefaultInterval is the logger's physical sample interval.
	DefaultInterval = 2 * time.Second
	// DemoLogger is the logger name used by DemoConfig.
	DemoLogger = "rack2"
	// DemoListen is a placeholder listen address; the wiring may override it.
	DemoListen = "127.0.0.1:8391"
	// HandlingC is the demo's safe-to-handle target in °C (common practice for bare-hand
	// contact with metal is lower still; this is an estimate, see the safety notes).
	HandlingC = 50
	// SettledWithinC is the half-width of the demo's "settled" band around ambient.
	SettledWithinC = 2
)

// Specimen is one body on the rack, cooling as a lumped capacitance.
type Specimen struct {
	// Channel is the channel name of its thermocouple.
	Channel string
	// Description says what it is and where it came from.
	Description string
	// Material gives ρ, c, k and emissivity.
	Material material.Material
	// Geometry selects the free-convection correlation.
	Geometry surface.Geometry
	// LengthM is the correlation's length: plate height or diameter, in metres.
	LengthM float64
	// VolumeM3 and AreaM2 are the body's volume and exposed surface area.
	VolumeM3, AreaM2 float64
	// StartC is the temperature when it is placed on the rack (t = 0).
	StartC float64
	// FixedH, when positive, replaces h(T) by this constant coefficient in W/(m²·K)
	// (for comparisons and tests).
	FixedH float64
}

// TimeConstant returns ρ·c·V/(h·A) in seconds for a surface coefficient h.
func (s Specimen) TimeConstant(h float64) float64 {
	return s.Material.Density * s.Material.SpecificHeat * s.VolumeM3 / (h * s.AreaM2)
}

// H returns the surface coefficient in W/(m²·K) at the given surface and ambient
// temperatures: FixedH if set, else convection plus radiation from predict/surface.
func (s Specimen) H(surfaceC, ambientC float64) float64 {
	if s.FixedH > 0 {
		return s.FixedH
	}
	return surface.Coefficient(s.Geometry, s.LengthM, s.Material.Emissivity, surfaceC, ambientC)
}

// Ambient is the room sensor: a slow sinusoidal drift around a mean.
type Ambient struct {
	// Channel is the ambient channel name.
	Channel string
	// MeanC is the mean room temperature.
	MeanC float64
	// DriftC is the drift amplitude in °C (a few tenths).
	DriftC float64
	// DriftPeriod is the period of the drift.
	DriftPeriod time.Duration
}

// At returns the ambient temperature t seconds after the start.
func (a Ambient) At(t float64) float64 {
	if a.DriftPeriod <= 0 {
		return a.MeanC
	}
	return a.MeanC + a.DriftC*math.Sin(2*math.Pi*t/a.DriftPeriod.Seconds())
}

// Scenario is a rack of specimens with an ambient sensor, read by one logger.
type Scenario struct {
	// Name describes the scenario.
	Name string
	// Logger is the logger name.
	Logger string
	// Specimens are the bodies on the rack, in column order.
	Specimens []Specimen
	// Ambient is the room sensor, the last column.
	Ambient Ambient
	// NoiseC is the standard deviation of the Gaussian reading noise in °C.
	NoiseC float64
	// ResolutionC is the reading resolution in °C.
	ResolutionC float64
}

// Columns returns the channel names in line order: specimens, then ambient.
func (s Scenario) Columns() []string {
	cols := make([]string, 0, len(s.Specimens)+1)
	for _, sp := range s.Specimens {
		cols = append(cols, sp.Channel)
	}
	return append(cols, s.Ambient.Channel)
}

// DemoScenario returns rack 2 after the afternoon furnace and oven batches (invented).
// Material values are those of predict/material (Incropera Table A.1/A.2 at 300 K,
// from memory there); specific heat is held at its 300 K value, which makes the hot
// steel cool somewhat faster than real steel would above ~500 °C (real c rises).
func DemoScenario() Scenario {
	const d1, l1 = 0.025, 0.050 // steel cylinder Ø25 × 50 mm
	const d2 = 0.040            // brass sphere Ø40 mm
	const a3, b3, t3 = 0.150, 0.100, 0.006
	const a4, b4, t4 = 0.100, 0.100, 0.010
	return Scenario{
		Name:   "rack 2 after the afternoon furnace and oven batches",
		Logger: DemoLogger,
		Specimens: []Specimen{{
			Channel:     "steel-cyl-a",
			Description: "carbon-steel cylinder Ø25×50 mm, lying, from the hardening furnace",
			Material:    mustMaterial("carbon steel"),
			Geometry:    surface.HorizontalCylinder, LengthM: d1,
			VolumeM3: math.Pi / 4 * d1 * d1 * l1, AreaM2: math.Pi*d1*l1 + math.Pi/2*d1*d1,
			StartC: 850,
		}, {
			Channel:     "brass-sphere-b",
			Description: "cartridge-brass sphere Ø40 mm from the annealing furnace",
			Material:    mustMaterial("brass"),
			Geometry:    surface.Sphere, LengthM: d2,
			VolumeM3: math.Pi / 6 * d2 * d2 * d2, AreaM2: math.Pi * d2 * d2,
			StartC: 450,
		}, {
			Channel:     "alu-plate-c",
			Description: "2024-T6 plate 150×100×6 mm, standing on its long edge, from the ageing oven",
			Material:    mustMaterial("aluminium alloy 2024-T6"),
			Geometry:    surface.VerticalPlate, LengthM: b3,
			VolumeM3: a3 * b3 * t3, AreaM2: 2*a3*b3 + 2*(a3+b3)*t3,
			StartC: 200,
		}, {
			Channel:     "alumina-tile-d",
			Description: "alumina tile 100×100×10 mm, standing, warm from the curing oven",
			Material:    mustMaterial("alumina"),
			Geometry:    surface.VerticalPlate, LengthM: b4,
			VolumeM3: a4 * b4 * t4, AreaM2: 2*a4*b4 + 4*a4*t4,
			StartC: 80,
		}},
		Ambient:     Ambient{Channel: "rack2-ambient", MeanC: 21.5, DriftC: 0.3, DriftPeriod: 90 * time.Minute},
		NoiseC:      0.1,
		ResolutionC: 0.1,
	}
}

func mustMaterial(name string) material.Material {
	m, ok := material.Lookup(name)
	if !ok {
		panic(fmt.Sprintf("sim: material %q missing from predict/material", name))
	}
	return m
}

// DemoConfig returns a configuration for this scenario read on port: one logger in
// format "line" (separator ",", clock in field 1, then one field per column), and per
// specimen channel the ambient channel, a handling target at HandlingC and a "settled"
// target within SettledWithinC of ambient, and a run naming the specimen, so the demo's
// record has a run per specimen from the start.
func (s Scenario) DemoConfig(port string) config.Config {
	var specimens []string
	for _, sp := range s.Specimens {
		specimens = append(specimens, sp.Channel)
	}
	cfg := lineConfig(s.Logger, port, specimens, s.Ambient.Channel)
	for i, sp := range s.Specimens {
		// Invented sample numbers: batch 2611, one letter per specimen.
		cfg.Channels[i].Run = &config.Run{
			Specimen:    fmt.Sprintf("S2611-%c", 'A'+i),
			Description: sp.Description,
		}
	}
	return cfg
}

// lineConfig builds the demo-style configuration for a logger whose lines are the clock,
// the specimen channels and the ambient channel.
func lineConfig(logger, port string, specimens []string, ambient string) config.Config {
	cfg := config.Config{
		Listen:  DemoListen,
		Loggers: []config.Logger{{Logger: daq.Logger{Name: logger, Port: port, Format: "line"}}},
	}
	lf := &cfg.Loggers[0].Line
	lf.Separator = ","
	lf.ClockColumn = 1
	for i, ch := range append(specimens, ambient) {
		lf.Columns = append(lf.Columns, daq.Column{Index: i + 2, Channel: ch})
	}
	for _, ch := range specimens {
		handling, within := float64(HandlingC), float64(SettledWithinC)
		cfg.Channels = append(cfg.Channels, config.Channel{
			Name:    ch,
			Ambient: ambient,
			Targets: []config.Target{
				{Name: "handling", Celsius: &handling, Handling: true},
				{Name: "settled", Within: &within},
			},
		})
	}
	cfg.Channels = append(cfg.Channels, config.Channel{Name: ambient})
	return cfg
}
