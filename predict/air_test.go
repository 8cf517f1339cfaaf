package predict

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/settle-lab/settle/predict/surface"
)

// airNote returns the forecast's "Air: …" note, or "".
func airNote(f *Forecast) string {
	for _, n := range f.Notes {
		if strings.HasPrefix(n, "Air: ") {
			return n
		}
	}
	return ""
}

// bar is a 20 mm steel bar (our own case), optionally with a convection setting.
func bar(air string, chamber *float64) *Specimen {
	return &Specimen{Shape: "cylinder", SizeM: 0.01, Sensor: "center", Air: air, ChamberC: chamber,
		Material: SpecimenMaterial{Density: 7850, SpecificHeat: 434, Conductivity: 60.5, Emissivity: 0.8}}
}

// Without a setting the engine fits still and moving air and keeps the one the data
// support: a bar cooled by a fan (constant 40 W/(m²·K) plus radiation) is "moving", the
// same bar in still air is "still"; both say so in a note. The specimen's setting
// decides without a comparison. (Without a specimen, three still-air emissivities can
// mimic this fan curve well enough that moving air does not clear airMargin: the
// engine then stays with still air, the safe side.)
func TestAnalyzeAirChoice(t *testing.T) {
	rng := rand.New(rand.NewPCG(51, 52))
	sp := bar("", nil)
	fan := sp.law()
	fan.ForcedH = 40
	fanData := simulateH(fan, sp.HeatCapacityPerArea(), 22, 400, 5, 2400)
	fanData.Celsius = noisy(rng, fanData.Celsius, 0.1)
	stillData := simulateH(sp.law(), sp.HeatCapacityPerArea(), 22, 400, 5, 4000)
	stillData.Celsius = noisy(rng, stillData.Celsius, 0.1)
	for _, c := range []struct {
		name string
		p    LumpedProblem
		sp   *Specimen
		want string
	}{
		{"fan, specimen without setting", fanData, sp, "Air: moving — constant convection"},
		{"still air, unknown specimen", stillData, nil, "Air: still — natural convection"},
		{"still air, specimen without setting", stillData, sp, "Air: still — natural convection"},
		{"fan, set moving", fanData, bar(ConvectionMoving, nil), "Air: moving (the specimen's convection setting)"},
		{"still air, set still", stillData, bar(ConvectionStill, nil), "Air: still (the specimen's convection setting)"},
	} {
		f := Analyze(c.p, t0, nil, AnalyzeOptions{Specimen: c.sp})
		if f.Model != ModelLumpedH || !strings.HasPrefix(airNote(f), c.want) {
			t.Errorf("%s: model %s, air note %q; want %s with %q", c.name, f.Model, airNote(f), ModelLumpedH, c.want)
		}
	}
}

// The moving-air choice is what makes the fan's forecast right: for a 60 mm steel bar
// under a fan, the crossing of 40 °C forecast at a quarter of the time to it lies
// within 5 % of the remaining time of the truth when the engine chooses, and misses
// by more when still air is imposed.
func TestAnalyzeAirForecast(t *testing.T) {
	sp := bar("", nil)
	sp.SizeM = 0.03
	fan := sp.law()
	fan.ForcedH = 40
	full := simulateH(fan, sp.HeatCapacityPerArea(), 22, 400, 5, 20000)
	truth := math.NaN()
	for i, v := range full.Celsius {
		if v <= 40 {
			truth = full.Times[i]
			break
		}
	}
	cut := truth / 4
	n := 0
	for n < len(full.Times) && full.Times[n] <= cut {
		n++
	}
	part := LumpedProblem{Times: full.Times[:n], Celsius: noisy(rand.New(rand.NewPCG(53, 54)), full.Celsius[:n], 0.1)}
	miss := func(sp *Specimen) float64 {
		f := Analyze(part, t0, []Target{{Name: "t", Celsius: 40}}, AnalyzeOptions{Specimen: sp})
		if f.Targets[0].State != StatePredicted {
			t.Fatalf("state %s, notes %q", f.Targets[0].State, f.Notes)
		}
		return f.Targets[0].At.Sub(t0).Seconds() - truth
	}
	still := bar(ConvectionStill, nil)
	still.SizeM = 0.03
	chosen, imposed := miss(sp), miss(still)
	horizon := truth - cut
	if math.Abs(chosen) > 0.05*horizon || !(math.Abs(imposed) > 3*math.Abs(chosen)) {
		t.Errorf("crossing error %.0f s chosen, %.0f s with still air imposed (remaining %.0f s): want the choice within 5 %% and still air off by more", chosen, imposed, horizon)
	}
}

// A specimen warming in a chamber at a set temperature: the set temperature stands for
// the ambient (air and walls), is reported as such, and the crossing of 170 °C is
// forecast from the first 10 minutes within 5 % of the remaining time.
func TestAnalyzeChamber(t *testing.T) {
	set := 180.0
	sp := bar(ConvectionChamber, &set)
	oven := sp.law()
	oven.ForcedH = 25
	full := simulateH(oven, sp.HeatCapacityPerArea(), set, 20, 5, 7200)
	truth := math.NaN()
	for i, v := range full.Celsius {
		if v >= 170 {
			truth = full.Times[i]
			break
		}
	}
	n := 0
	for n < len(full.Times) && full.Times[n] <= 600 {
		n++
	}
	part := LumpedProblem{Times: full.Times[:n], Celsius: noisy(rand.New(rand.NewPCG(55, 56)), full.Celsius[:n], 0.1)}
	f := Analyze(part, t0, []Target{{Name: "t", Celsius: 170}}, AnalyzeOptions{Specimen: sp})
	notes := strings.Join(f.Notes, " ")
	if f.Ambient != set || !strings.Contains(notes, "chamber's set temperature, 180 °C") || !strings.Contains(notes, "Air: moving (the specimen is in a chamber)") {
		t.Errorf("ambient %g, notes %q; want the set temperature 180 and the chamber notes", f.Ambient, f.Notes)
	}
	tf := f.Targets[0]
	if err := tf.At.Sub(t0).Seconds() - truth; tf.State != StatePredicted || math.Abs(err) > 0.05*(truth-600) {
		t.Errorf("state %s, crossing error %.0f s of %.0f s remaining", tf.State, err, truth-600)
	}
}

// The convection keys: each bad combination is refused naming its key.
func TestSpecimenConvectionValidate(t *testing.T) {
	set := 180.0
	nan := math.NaN()
	for _, c := range []struct {
		air     string
		chamber *float64
		err     string
	}{
		{"", nil, ""},
		{ConvectionStill, nil, ""},
		{ConvectionMoving, nil, ""},
		{ConvectionChamber, &set, ""},
		{"fan", nil, `convection: "fan" is not still, moving or chamber`},
		{ConvectionChamber, nil, "chamber_c: convection: chamber needs the chamber's set temperature in °C"},
		{ConvectionChamber, &nan, "chamber_c: convection: chamber needs the chamber's set temperature in °C"},
		{ConvectionMoving, &set, "chamber_c: only a specimen with convection: chamber has a set temperature"},
	} {
		err := bar(c.air, c.chamber).Validate()
		if (err == nil) != (c.err == "") || err != nil && err.Error() != c.err {
			t.Errorf("convection %q chamber %v: error %v, want %q", c.air, c.chamber, err, c.err)
		}
	}
}

// A moving-air law is constant convection plus the radiation of predict/surface.
func TestSurfaceLawForced(t *testing.T) {
	l := SurfaceLaw{Geometry: surface.VerticalPlate, LengthM: 0.1, Emissivity: 0.8, ForcedH: 40}
	want := 40 + surface.Radiation(0.8, 300, 20)
	if got := l.H(300, 20); math.Abs(got-want) > 1e-12 {
		t.Errorf("H(300, 20) = %g, want %g", got, want)
	}
}
