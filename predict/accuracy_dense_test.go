package predict

import (
	"flag"
	"strings"
	"testing"

	"github.com/settle-lab/settle/predict/benchgen"
)

var dense = flag.Bool("dense", false, "the interval diagnostics (-intervalcov, -intervaldiag) read the benchmark 8 times denser")

// TestAccuracyDense scores the generated benchmark's cases simulated again with about
// 3,200 readings to the crossing, at least 1 s apart (testdata/bench has about 400,
// at least 2 s): the density of a logger read every second, where the forecasts at
// 25 and 50 % elapsed have more than maxFitPoints readings, so the h(T) fits iterate
// on bins of them (binned).
// It runs with the README's test command (about 50 s under -race on a 2-core machine;
// skipped only with -short); go test ./predict -run TestAccuracyDense -v prints it. It
// prints the table (compare it with a run before a change to the fits) and asserts
// only that no open-ended answer's early bound lies after the true crossing (one did,
// unseen, before the open branch's profile reached to the room prior's far end: run50
// with its description at 50 % elapsed; see predictedFrom).
func TestAccuracyDense(t *testing.T) {
	if testing.Short() {
		t.Skip("dense accuracy benchmark skipped with -short")
	}
	sc := scoreCases(t, benchgen.Cases(), func(c benchgen.Case) (benchgen.Case, CurveFile) {
		c, text := benchgen.RunEvery(c, 3200, 1)
		curve, err := ReadCurveCSV(strings.NewReader(text), c.File)
		if err != nil {
			t.Fatalf("%s: %v", c.File, err)
		}
		return c, curve
	})
	t.Log(accuracyTable(sc))
	checkOpenEnded(t, sc)
}
