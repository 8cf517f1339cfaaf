package predict

import (
	"fmt"
	"strings"
	"testing"

	"github.com/settle-lab/settle/predict/benchgen"
)

// caseSpecimen is the specimen description of a benchmark case, as a lab would
// write it: the case's shape, sizes, sensor, material by name with its nominal
// emissivity (not the simulation's perturbed one), and how the air moves (a fan:
// moving; an oven: a chamber at its set point).
func caseSpecimen(c benchgen.Case) (*Specimen, error) {
	sp := Specimen{Shape: c.Shape, SizeM: c.SizeM, LengthM: c.LengthM, Sensor: c.Sensor,
		Material: SpecimenMaterial{Name: c.Material, Emissivity: c.Emissivity}}
	switch c.Air {
	case "fan":
		sp.Air = ConvectionMoving
	case "oven":
		set := c.SetC
		sp.Air, sp.ChamberC = ConvectionChamber, &set
	}
	if err := sp.resolve(); err != nil {
		return nil, err
	}
	return &sp, sp.Validate()
}

// withSpecimen is the engine given the specimen description.
func withSpecimen(sp *Specimen) method {
	return func(cf CurveFile, level float64) (at, lo, hi float64, ok bool) {
		p, onset, _ := Prepare(cf.Times, cf.Celsius, cf.FilledAmbient())
		f := Analyze(p, origin.Add(seconds(onset)), []Target{{Name: "t", Celsius: level}}, AnalyzeOptions{Specimen: sp})
		return fromForecast(f.Targets[0])
	}
}

// thickAccuracy scores, on the benchmark's cases with Bi > 0.1 (thick or
// low-conductivity specimens), the engine without and with the specimen
// description, and the plain lumped exponential; keys are "method/fraction".
func thickAccuracy(t *testing.T) (map[string]*score, int) {
	idx := benchIndex(t)
	out := map[string]*score{}
	cases := 0
	for _, c := range idx.Cases {
		if !(c.Biot > 0.1) {
			continue
		}
		cases++
		sp, err := caseSpecimen(c)
		if err != nil {
			t.Fatalf("%s: %v", c.File, err)
		}
		methods := map[string]method{"engine": engine, "engine+spec": withSpecimen(sp), "exp3": exponential3}
		curve := readBenchCase(t, c)
		for _, frac := range fractions {
			for name, m := range methods {
				tr := judge(m, curve, c, frac)
				key := fmt.Sprintf("%s/%.2f", name, frac)
				if out[key] == nil {
					out[key] = &score{}
				}
				out[key].add(tr)
			}
		}
	}
	return out, cases
}

// TestAccuracyThick prints the accuracy table on the benchmark's cases with
// Bi > 0.1 (go test ./predict -run TestAccuracyThick -v), the engine with and
// without the specimen description beside the lumped exponential, and holds the
// engine with the description to doing no worse than without it: median relative
// error at 25 % elapsed at most that of the engine alone plus one point. At 50 % it
// is held to its own floor instead, 6.5 % (5.3 % measured): loosened (issue 12) when
// the engine without a description began leaving a segment's start transient out of
// the fit (afterTransient: these thick specimens' centre sensors lag their surface at
// first), which took its median at 50 % from 12.7 to 3.6 %; the described engine
// fits the conduction models from the placement on and does not refit after the
// start, so the description cost 1.7 points there (left: the conduction fit's own
// start). With the moving-air share refined too (refineMovingShare, merged the same
// night) the engine without a description is at 9.0 % at 50 %: the description costs
// nothing there on the merged code, but a median of 14 cases moves by points with one
// case, so the floor stays.
func TestAccuracyThick(t *testing.T) {
	if testing.Short() {
		t.Skip("accuracy benchmark skipped with -short")
	}
	sc, n := thickAccuracy(t)
	if n < 5 {
		t.Fatalf("only %d benchmark cases with Bi > 0.1", n)
	}
	var b strings.Builder
	fmt.Fprintf(&b, "\n%d cases with Bi > 0.1\n%-12s %5s |%s\n", n, "method", "frac", tableHead)
	for _, m := range []string{"engine+spec", "engine", "exp3"} {
		for _, fr := range fractions {
			fmt.Fprintf(&b, "%-12s %4.0f%% | %s\n", m, 100*fr, sc[fmt.Sprintf("%s/%.2f", m, fr)].row())
		}
	}
	t.Log(b.String())
	with, without := quantile(sc["engine+spec/0.25"].errs, 0.5), quantile(sc["engine/0.25"].errs, 0.5)
	if with > without+0.01 {
		t.Errorf("at 25 %% elapsed the specimen description makes the median error worse: %.1f %% vs %.1f %%", 100*with, 100*without)
	}
	if with := quantile(sc["engine+spec/0.50"].errs, 0.5); with > 0.065 {
		t.Errorf("at 50 %% elapsed the median error with the specimen description is %.1f %%, floor 6.5 %%", 100*with)
	}
}
