package predict

import (
	"flag"
	"fmt"
	"math"
	"strings"
	"testing"
)

var (
	realDiag   = flag.Bool("realdiag", false, "run TestRealTrials (prints every real-curve trial: the engine's answer beside the baselines')")
	realFamily = flag.String("realfamily", "", "TestRealTrials prints only this family's segments (all when empty; the tallies stay over all)")
)

// TestRealTrials prints every scored trial of the measured curves (go test ./predict
// -run TestRealTrials -realdiag -v), segment by segment: for each target and elapsed
// fraction, the readings up to the cutoff, the engine's answer (closed interval,
// "not before" beside a central estimate or alone, "not before now", or none), its
// relative error, its interval's ends as signed shares of the time left to the true
// crossing ("∞" for no late end) and whether it held the truth, beside the linear
// trend's and the free exponential's errors. Then,
// per fraction, how many trials over all families are at or under 15 % and covered
// against what the goals (median ≤ 15 %, coverage ≥ 85 %) need. It is the
// per-target view behind TestAccuracyReal's table and asserts nothing.
func TestRealTrials(t *testing.T) {
	if !*realDiag {
		t.Skip("real-curve trials run with -realdiag")
	}
	type tally struct{ under, covered, judged int }
	tallies := map[float64]*tally{}
	for _, fr := range fractions {
		tallies[fr] = &tally{}
	}
	var b strings.Builder
	for _, seg := range realSegments(t) {
		show := *realFamily == "" || seg.family == *realFamily
		if show {
			fmt.Fprintf(&b, "%s, %s: %d readings over %.0f s, %.2f → %.2f °C\n", seg.family, seg.name,
				len(seg.curve.Times), seg.curve.Times[len(seg.curve.Times)-1], seg.curve.Celsius[0], seg.curve.Celsius[len(seg.curve.Celsius)-1])
		}
		for _, tg := range targetsOf(seg.curve) {
			for _, fr := range fractions {
				part := seg.curve.Until(fr * tg.crossing)
				n := len(part.Times)
				if n < minRealReadings {
					continue
				}
				tr := judgeAt(engine, part, tg.level, tg.crossing)
				lin := judgeAt(linearTrend, part, tg.level, tg.crossing)
				ty := tallies[fr]
				ty.judged++
				if tr.rel <= 0.15 {
					ty.under++
				}
				if tr.covered {
					ty.covered++
				}
				if !show {
					continue
				}
				exp := judgeAt(exponential3, part, tg.level, tg.crossing)
				fmt.Fprintf(&b, "  %6.2f °C at %4.0f s, %2.0f %%: %4d readings, %-24s error %s%s %s, linear %s, exp3 %s\n",
					tg.level, tg.crossing, 100*fr, n, answerKind(engine, part, tg.level, tr), percent(tr.rel),
					map[bool]string{true: " held", false: "     "}[tr.covered], interval(part, tg), percent(lin.rel), percent(exp.rel))
			}
		}
	}
	for _, fr := range fractions {
		ty := tallies[fr]
		need := (ty.judged + 1) / 2 // the median's trial, counted from the best
		fmt.Fprintf(&b, "at %2.0f %%: %d of %d trials at or under 15 %% (the median needs about %d), %d covered (85 %% needs %d)\n",
			100*fr, ty.under, ty.judged, need, ty.covered, int(math.Ceil(0.85*float64(ty.judged))))
	}
	t.Log("\n" + b.String())
}

// answerKind names the kind of answer method m gave on part for level, judged as tr.
func answerKind(m method, part CurveFile, level float64, tr trial) string {
	at, _, _, ok := m(part, level)
	switch {
	case !ok:
		return "no answer"
	case tr.vacuous && math.IsNaN(at):
		return "not before now"
	case tr.vacuous:
		return "estimate, not before now"
	case tr.open && math.IsNaN(at):
		return "not before, no estimate"
	case tr.open:
		return "estimate and not before"
	}
	return "closed interval"
}

// interval is the engine's interval for tg on part, its ends as signed shares of the
// time left to the true crossing ("∞" for no late end, "none" for no answer).
func interval(part CurveFile, tg realTarget) string {
	_, lo, hi, ok := engine(part, tg.level)
	if !ok {
		return "[none]"
	}
	horizon := tg.crossing - part.Times[len(part.Times)-1]
	end := func(x float64) string {
		if math.IsInf(x, 1) {
			return "∞"
		}
		return fmt.Sprintf("%+.0f%%", 100*(x-tg.crossing)/horizon)
	}
	return "[" + end(lo) + ", " + end(hi) + "]"
}

// percent formats a relative error as a percentage, "none" when infinite.
func percent(rel float64) string {
	if math.IsInf(rel, 1) {
		return "  none"
	}
	return fmt.Sprintf("%5.1f%%", 100*rel)
}
