package predict

import (
	"flag"
	"fmt"
	"strings"
	"testing"
)

var groupDiag = flag.String("groupdiag", "", "run TestGroupDiagnosis on the benchmark group named (all, hot, warm, warming, fan, oven)")

// TestGroupDiagnosis prints, for each benchmark case of one group (go test ./predict
// -run TestGroupDiagnosis -groupdiag fan -v; add -dense for the denser simulation), at
// each elapsed fraction without and with the specimen description, the signed error
// and the interval's ends over the remaining time (forecast minus truth; "no answer"
// without one), the model and its fitted ambient, and
// the notes on the air and the emissivity: the case-by-case reading behind a table
// row. It asserts nothing.
func TestGroupDiagnosis(t *testing.T) {
	if *groupDiag == "" {
		t.Skip("runs with -groupdiag GROUP")
	}
	var b strings.Builder
	for _, c := range benchIndex(t).Cases {
		if *groupDiag != "all" && group(c) != *groupDiag {
			continue
		}
		c, curve := diagCurve(t, c)
		sp, err := caseSpecimen(c)
		if err != nil {
			t.Fatal(err)
		}
		fmt.Fprintf(&b, "%s %s %s ε %.2f (true %.2f) fan_h %.1f×%.2f room %.1f init %.0f target %.1f measured %v\n",
			c.File, c.Material, c.Shape, c.Emissivity, c.TrueEmissivity, c.FanH, c.HMult, c.Ambient, c.Initial, c.Target, c.Measured)
		for _, frac := range fractions {
			part := curve.Until(c.PlacedS + frac*(c.CrossingS-c.PlacedS))
			horizon := c.CrossingS - part.Times[len(part.Times)-1]
			for _, s := range []*Specimen{nil, sp} {
				p, onset, _ := Prepare(part.Times, part.Celsius, part.FilledAmbient())
				f := Analyze(p, origin.Add(seconds(onset)), []Target{{Name: "t", Celsius: c.Target}}, AnalyzeOptions{Specimen: s})
				at, lo, hi, ok := fromForecast(f.Targets[0])
				air := ""
				for _, n := range f.Notes {
					if strings.HasPrefix(n, "Air:") || strings.Contains(n, "mission") {
						air += " | " + n
					}
				}
				if !ok {
					fmt.Fprintf(&b, "  %3.0f%% spec %-5v no answer (%s) %s amb %.1f%s\n", 100*frac, s != nil, f.Targets[0].State, f.Model, f.Ambient, air)
					continue
				}
				fmt.Fprintf(&b, "  %3.0f%% spec %-5v err %+7.3f [%+.3f, %+.3f] %s amb %.1f%s\n", 100*frac, s != nil,
					(at-c.CrossingS)/horizon, (lo-c.CrossingS)/horizon, (hi-c.CrossingS)/horizon, f.Model, f.Ambient, air)
			}
		}
	}
	t.Log("\n" + b.String())
}
