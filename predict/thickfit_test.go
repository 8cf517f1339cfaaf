package predict

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/predict/conduction"
)

// concreteSlab is a 100 mm concrete slab (half-thickness 50 mm), 300 mm high;
// properties of ordinary concrete, Incropera 6th ed. Table A.3 (via predict/material).
func concreteSlab(sensor string) Specimen {
	return Specimen{Shape: "slab", SizeM: 0.05, LengthM: 0.3, Sensor: sensor,
		Material: SpecimenMaterial{Density: 2300, SpecificHeat: 880, Conductivity: 1.4, Emissivity: 0.9}}
}

// exactSlab returns the exact constant-h series temperature of the slab at pos,
// from 150 °C into 20 °C with h = 20 W/(m²·K) (Bi = 0.71 on the half-thickness).
func exactSlab(sp Specimen, pos float64) func(t float64) float64 {
	k, l := sp.Material.Conductivity, sp.SizeM
	alpha := k / (sp.Material.Density * sp.Material.SpecificHeat)
	c := conduction.NewSeries(conduction.Slab, 20*l/k, 0).At(pos)
	return func(t float64) float64 { return 20 + 130*c.Theta(alpha*t/(l*l)) }
}

// crossingOf returns when the falling curve f reaches level, by bisection.
func crossingOf(f func(float64) float64, level float64) float64 {
	lo, hi := 0.0, 1e7
	for range 100 {
		mid := (lo + hi) / 2
		if f(mid) > level {
			lo = mid
		} else {
			hi = mid
		}
	}
	return lo
}

// slabProblem samples f every 10 s up to until with 0.1 °C noise.
func slabProblem(f func(float64) float64, until float64, seed uint64) LumpedProblem {
	rng := rand.New(rand.NewPCG(seed, 7))
	var p LumpedProblem
	for t := 0.0; t <= until; t += 10 {
		p.Times = append(p.Times, t)
		p.Celsius = append(p.Celsius, f(t)+0.1*rng.NormFloat64())
	}
	return p
}

// A thick concrete slab with a surface thermocouple: the surface crosses 50 °C well
// before the centre. With the specimen known, the engine moves to the conduction
// series model; a plain 50 °C target is reached at the surface's crossing, while
// the handling target at 50 °C is predicted at the centre's crossing (within 5 % of
// the time still to go), not the surface's, and says so in a note.
func TestAnalyzeHandlingFromCentre(t *testing.T) {
	sp := concreteSlab("surface")
	surf, centre := exactSlab(sp, 1), exactSlab(sp, 0)
	tSurf, tCentre := crossingOf(surf, 50), crossingOf(centre, 50)
	if tCentre < tSurf+1800 {
		t.Fatalf("test set-up: centre crosses at %.0f s, surface at %.0f s; want the centre well behind", tCentre, tSurf)
	}
	now := tSurf + 600 // the surface reading is already below 50 °C
	p := slabProblem(surf, now, 1)
	targets := []Target{{Name: "cool", Celsius: 50}, {Name: "handle", Celsius: 50, Handling: true}}
	f := Analyze(p, t0, targets, AnalyzeOptions{Specimen: &sp})
	if f.Model != ModelConductionSeries || f.OutOfRange || !(f.Biot >= 0.1) {
		t.Fatalf("model %s, Bi %g, out of range %v; notes %q", f.Model, f.Biot, f.OutOfRange, f.Notes)
	}
	if s := f.Targets[0]; s.State != StateReached || math.Abs(s.At.Sub(t0).Seconds()-tSurf) > 20 {
		t.Errorf("plain target: %s at %v, want reached at the surface's %.0f s", s.State, s.At.Sub(t0), tSurf)
	}
	h := f.Targets[1]
	at := h.At.Sub(t0).Seconds()
	if h.State != StatePredicted || math.Abs(at-tCentre) > 0.05*(tCentre-now) {
		t.Errorf("handling target: %s at %.0f s, want predicted near the centre's %.0f s (surface %.0f s)", h.State, at, tCentre, tSurf)
	}
	if lo, hi := h.Earliest.Sub(t0).Seconds(), h.Latest.Sub(t0).Seconds(); lo > tCentre || hi < tCentre {
		t.Errorf("handling interval [%.0f, %.0f] s misses the centre's crossing %.0f s", lo, hi, tCentre)
	}
	if !strings.Contains(strings.Join(f.Notes, " "), "handling forecast is based on the centre, which lags the surface") {
		t.Errorf("no handling note: %q", f.Notes)
	}
	// The estimated centre curve (drawn on the page and in figures) follows the exact
	// centre: 50 °C at the centre's crossing, within 2 °C.
	if f.Centre == nil {
		t.Fatal("surface sensor: no centre curve")
	}
	if c := f.Centre(t0.Add(time.Duration(tCentre * float64(time.Second)))); math.Abs(c-50) > 2 {
		t.Errorf("centre curve at the centre's crossing: %.1f °C, want 50 ± 2", c)
	}
}

// With the thermocouple at the centre of the same slab, the conduction model follows
// the centre's curve, which a lumped exponential does not fit; the 50 °C crossing is
// forecast within 5 % of the time to go from a third of the way there. Without the
// specimen the engine stays lumped (it cannot know Bi).
func TestAnalyzeConductionCentre(t *testing.T) {
	sp := concreteSlab("center")
	centre := exactSlab(sp, 0)
	tc := crossingOf(centre, 50)
	now := tc / 3
	p := slabProblem(centre, now, 2)
	tg := []Target{{Name: "t", Celsius: 50}}
	f := Analyze(p, t0, tg, AnalyzeOptions{Specimen: &sp})
	at := f.Targets[0].At.Sub(t0).Seconds()
	if f.Model != ModelConductionSeries || math.Abs(at-tc) > 0.05*(tc-now) {
		t.Errorf("with specimen: model %s, crossing %.0f s, want %.0f s; notes %q", f.Model, at, tc, f.Notes)
	}
	if f.Centre != nil {
		t.Error("centre sensor: a separate centre curve was given")
	}
	if g := Analyze(p, t0, tg, AnalyzeOptions{}); strings.HasPrefix(g.Model, "conduction") {
		t.Errorf("without specimen: model %s", g.Model)
	}
}

// Every shape converts to the conduction package's half-dimensions.
func TestSpecimenConduction(t *testing.T) {
	base := concreteSlab("surface")
	for _, c := range []struct {
		shape         string
		length, width float64
		want          conduction.Specimen
	}{
		{"slab", 0.3, 0, conduction.Specimen{Shape: conduction.Slab, Size: 0.05, Length: 0.3}},
		{"cylinder", 0, 0, conduction.Specimen{Shape: conduction.Cylinder, Size: 0.05}},
		{"sphere", 0, 0, conduction.Specimen{Shape: conduction.Sphere, Size: 0.05}},
		{"short-cylinder", 0.2, 0, conduction.Specimen{Shape: conduction.ShortCylinder, Size: 0.05, Length: 0.1}},
		{"block", 0.2, 0.15, conduction.Specimen{Shape: conduction.Cuboid, Size: 0.05, Length: 0.1, Width: 0.075}},
	} {
		sp := base
		sp.Shape, sp.LengthM, sp.WidthM = c.shape, c.length, c.width
		if err := sp.Validate(); err != nil {
			t.Fatalf("%s: %v", c.shape, err)
		}
		got, err := sp.Conduction()
		if err != nil || got.Shape != c.want.Shape || got.Size != c.want.Size || got.Length != c.want.Length ||
			got.Width != c.want.Width || got.Sensor != conduction.Surface || got.Conductivity != 1.4 {
			t.Errorf("%s: %+v, %v; want %+v", c.shape, got, err, c.want)
		}
	}
}

// BenchmarkAnalyzeConduction2000 is the daemon's cost of one analysis of a
// 2,000-point curve with a known thick specimen (lumped, h(T) and conduction fits).
// Goal (issue 4 brief): well under 100 ms.
func BenchmarkAnalyzeConduction2000(b *testing.B) {
	for _, c := range []struct {
		name   string
		sensor string
		t0     float64
	}{{"warm-centre", "center", 150}, {"warm-surface", "surface", 150}, {"hot-centre", "center", 600}} {
		b.Run(c.name, func(b *testing.B) {
			sp := concreteSlab(c.sensor)
			pos := 0.0
			if c.sensor == "surface" {
				pos = 1
			}
			f := exactSlab(sp, pos)
			p := slabProblem(func(t float64) float64 { return 20 + (c.t0-20)*(f(t)-20)/130 }, 19990, 3)
			tg := []Target{{Name: "handle", Celsius: 50, Handling: true}}
			for b.Loop() {
				Analyze(p, time.Time{}, tg, AnalyzeOptions{Specimen: &sp})
			}
		})
	}
}

// The daemon's path: a channel configured with a specimen (config.ChannelSpecs builds
// this spec from a configuration; config's TestChannelSpecsConduction checks that it
// does) gets the conduction model from NewBench, and its handling target follows the
// centre of the slab although the thermocouple is on the surface.
func TestBenchSpecimenFromConfig(t *testing.T) {
	specs := []ChannelSpec{{
		Name: "slab-7",
		Targets: []Target{
			{Name: "handling", Celsius: 50, Handling: true},
			{Name: "settled", Celsius: math.NaN(), Within: 2},
		},
		Specimen: &Specimen{Shape: "slab", SizeM: 0.05, LengthM: 0.3, Sensor: "surface",
			Material: SpecimenMaterial{Density: 2300, SpecificHeat: 880, Conductivity: 1.4, Emissivity: 0.9}},
	}}
	sp := concreteSlab("surface")
	surf, centre := exactSlab(sp, 1), exactSlab(sp, 0)
	tSurf, tCentre := crossingOf(surf, 50), crossingOf(centre, 50)
	b := NewBench(specs, TrackerOptions{})
	p := slabProblem(surf, tSurf+600, 1)
	b.Restore(func(observe func(string, time.Time, float64)) {
		for i, s := range p.Times {
			observe("slab-7", t0.Add(seconds(s)), p.Celsius[i])
		}
	})
	f := b.Snapshot()[0].Forecast
	if f == nil || f.Model != ModelConductionSeries {
		t.Fatalf("forecast %+v, want model %s", f, ModelConductionSeries)
	}
	h := f.Targets[0]
	if at := h.At.Sub(t0).Seconds(); h.State != StatePredicted || math.Abs(at-tCentre) > 0.05*(tCentre-tSurf-600) {
		t.Errorf("handling: %s at %.0f s, want predicted near the centre's %.0f s (surface crossed at %.0f s)",
			h.State, at, tCentre, tSurf)
	}
}

// The delta-method sd of a conduction crossing, from the fit's full covariance,
// matches the scatter of the crossing over repeated noisy curves within 25 % (the
// slab's centre, ambient fitted, independent noise so no widening applies).
func TestConductionCrossingVariance(t *testing.T) {
	sp := concreteSlab("centre")
	cs, err := sp.Conduction()
	if err != nil {
		t.Fatal(err)
	}
	f := exactSlab(sp, 0)
	const reps = 60
	var ts []float64
	var reported float64
	for k := range reps {
		p := slabProblem(f, 3000, uint64(k+1))
		sf, err := conduction.FitSeries(cs, p.Times, p.Celsius, math.NaN())
		if err != nil {
			t.Fatal(err)
		}
		c := newCondFitted(sf, cs, p, 0, sf.Initial, sf.Ambient, sf.Cov)
		at, v, _, ok := c.crossing(50, false)
		if !ok {
			t.Fatalf("run %d: no crossing of 50 °C", k)
		}
		ts = append(ts, at)
		reported += math.Sqrt(v) / reps
	}
	mean, ss := 0.0, 0.0
	for _, v := range ts {
		mean += v / reps
	}
	for _, v := range ts {
		ss += (v - mean) * (v - mean)
	}
	scatter := math.Sqrt(ss / (reps - 1))
	if r := reported / scatter; r < 0.75 || r > 1.25 {
		t.Errorf("crossing sd: reported %.1f s, scatter over %d curves %.1f s (mean crossing %.0f s, exact %.0f s)",
			reported, reps, scatter, mean, crossingOf(f, 50))
	}
}
