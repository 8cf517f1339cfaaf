package predict

import (
	"flag"
	"fmt"
	"math"
	"testing"
)

var (
	realTargets = flag.Bool("realtargets", false, "run TestRealTargets (every real-curve forecast, target by target)")
	realFamily  = flag.String("realfamily", "", "TestRealTargets prints only this family (all when empty)")
)

// TestRealTargets prints every scored forecast on the measured curves (go test
// ./predict -run TestRealTargets -realtargets -v): segment, target level, elapsed
// fraction, readings, the engine's central estimate and interval ends as signed shares
// of the time left to the true crossing ("none" where it gives none, "∞" for no late
// end), whether the interval holds the truth, and the two baselines' estimates. A
// diagnostic: it asserts nothing (TestAccuracyReal holds the floors).
func TestRealTargets(t *testing.T) {
	if !*realTargets {
		t.Skip("run with -realtargets")
	}
	rel := func(x, truth, horizon float64) string {
		switch {
		case math.IsNaN(x):
			return "none"
		case math.IsInf(x, 1):
			return "∞"
		}
		return fmt.Sprintf("%+.1f%%", 100*(x-truth)/horizon)
	}
	for _, seg := range realSegments(t) {
		if *realFamily != "" && seg.family != *realFamily {
			continue
		}
		for _, tg := range targetsOf(seg.curve) {
			for _, frac := range fractions {
				part := seg.curve.Until(frac * tg.crossing)
				if len(part.Times) < minRealReadings {
					continue
				}
				horizon := tg.crossing - part.Times[len(part.Times)-1]
				at, lo, hi, ok := engine(part, tg.level)
				if !ok {
					at, lo, hi = math.NaN(), math.NaN(), math.NaN()
				}
				tr := judgeAt(engine, part, tg.level, tg.crossing)
				answer := func(m method) string {
					x, _, _, ok := m(part, tg.level)
					if !ok {
						x = math.NaN()
					}
					return rel(x, tg.crossing, horizon)
				}
				t.Logf("%-13s %-28s %6.2f °C %3.0f%% n=%4d  at %7s  [%7s, %7s] covered %-5v  linear %7s  exp3 %7s",
					seg.family, seg.name, tg.level, 100*frac, len(part.Times),
					rel(at, tg.crossing, horizon), rel(lo, tg.crossing, horizon), rel(hi, tg.crossing, horizon), tr.covered,
					answer(linearTrend), answer(exponential3))
			}
		}
	}
}
