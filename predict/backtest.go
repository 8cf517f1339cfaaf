package predict

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// The model-form term of a crossing's interval (IntervalSettings.ModelError) is sized
// from the segment itself: the chosen model is refitted to the readings up to earlier
// cutoffs of the same segment, and its forecast of the readings seen since is compared
// with them. A clean curve the model follows gets a narrow interval, a curve that
// drifts away from the model's shape a wide one.

// backtestCutoffs are the earlier cutoffs, as shares of the segment's span. The
// cutoff at 30 % looks furthest ahead (up to 2.3 times the refitted span, where the
// daemon's forecasts early in a segment look 3 to 9 times their span ahead), so the
// model-form term is measured at the horizons it is used for rather than carried out
// to them by the growth law alone. Measured side by side with {0.5, 0.7} (go test
// ./predict -run 'TestAccuracy(Table|Thick|Real)' -v): at 25 % elapsed the described
// benchmark specimens keep 91 % coverage with the median width 0.33 → 0.29 of the
// remaining time (undescribed: 88 %, 0.52 → 0.46); thick specimens 79 %, 0.82 → 0.70;
// the measured cell rests 96 → 100 % coverage with 2.0 → 1.6. Cost: one more refit,
// about +10 % CPU per Analyze (BenchmarkAnalyze2000 8.1 → 8.8 ms).
var backtestCutoffs = []float64{0.3, 0.5, 0.7}

// backtestWindows is the number of time windows the readings after a cutoff are
// averaged in (the average takes the noise out of each miss).
const backtestWindows = 4

// Shrinkage of the backtest's estimate toward the default model-form term (the old
// benchmark's calibration, see IntervalSettings.ModelError): the default counts as
// priorWindows windows of evidence, or priorWindowsSpecimen when the specimen is
// described (the model then has the right geometry, material and air, and its own
// backtest deserves more trust). On the independent benchmark (testdata/bench) at 25 %
// elapsed, with cutoffs at 50 and 70 %: described specimens at weight 1 cover 91 % with
// a median width of 0.33 of the remaining time (at 4: 95 %, 0.50); undescribed ones at
// 1 fell to 77 % coverage over all fractions, so they keep 4 (88 %, 0.52). With the
// cutoff at 30 % added: 91 %, 0.29 and 88 %, 0.46. Tuned on the benchmark it is scored
// on, which flatters it.
//
// Tried and not taken (issue 12): without a description, growth beyond the span as
// h·(h/span)^0.25 instead of the square root and the default at 6 windows instead of
// 4 (the benchmark's errors relative to the remaining time barely grow with the
// horizon: medians 0.083, 0.050, 0.046 at h/span 9, 3, 1). At 25 % elapsed it moved
// the benchmark to 88 % coverage at width 0.39 (86 %, 0.46 here), but the same
// specimens at a logger's density (-dense) fell out of the 85–95 % range (86 → 82 %)
// and coverage at 10 % elapsed fell 79 → 77 % (dense 79 → 71 %, thick 64 → 57 %): a
// move along the width-coverage trade, tuned on the benchmark, not a better interval.
// The backtest's own miss sign agreed with the final error's in only 58 % of the
// cases, so it cannot shift an interval either.
//
// Diagnosis (issue 12, the width goal: 85–95 % coverage with a median width ≤ 0.3 of
// the remaining time at 25 % elapsed; go test ./predict -run TestIntervalDiagnosis
// -intervaldiag -diagfrac 0.25 -v, add -dense for the denser simulation). Without a
// description the 56 forecasts at 25 % are 86 % held, median width 0.45:
//
//   - The clean curves are wide because of the default, not their own backtest: 39 of
//     the 56 take more than half of k² from it (hot 16 of 19, warm 9 of 13, warming 6 of
//     8, fan 6 of 10). Their own backtest gives a raw k of 0.002–0.04 (median 0.013);
//     pooled with 0.14 at 4 windows against 12 it is 0.070, which at h ≈ 3 spans and
//     Z ≈ 1.66 is a width of about 0.40. Their misses are up to 0.12 of the remaining
//     time (run22, run24), once 0.24 (run40, a fan taken for still air), and the default
//     is what holds them: nothing in the backtest flags those curves.
//   - The median counts the 14 answers without a closed interval (11 open-ended, 3
//     ovens unanswered) as infinitely wide, so it is the 28th of the 42 finite widths,
//     two thirds of the way up: the goal needs two thirds of all closed intervals ≤ 0.3.
//   - Coverage has no room: of the 8 misses, 7 have no closed interval (the fans and
//     warm specimens answered "not before now", which the score counts as a miss, and
//     the 3 ovens without an answer; the 8th, run55, is a closed interval 0.34 off).
//     85 % of 56 is 48 held, so the other 49 answers must hold the truth 48 times, 98 %:
//     an interval calibrated to hold 90 % of them would hold about 44, 79 % overall.
//     The same count at 10 % elapsed: 12 misses, 11 without a closed interval; at 50 %:
//     10, 4; dense at 25 %: 8, 7.
//
// So the width goal is not reachable by sizing alone; it needs the "not before now"
// answers or the unanswered ovens to get real answers first (notBefore, the ovens
// without a description), not a narrower interval. Measured on the way (benchmark
// coverage at 10 / 25 / 50 % elapsed and median width at 25 %; before: 79 / 86 / 82 %,
// 0.45; dense 77 / 86 / 86 %, 0.42):
//
//   - A lighter default alone: at 2 windows 77 / 84 / 79 %, 0.36; at 1 window 75 / 84 /
//     75 %, 0.28 (dense 70 / 82 / 80 %, 0.25). The width goal is reached only past the
//     coverage range.
//   - A conditional term for the model choice: the spread between the still-air and
//     the moving-air fit's crossings, sqrt(w·(1 − w))·|Δt| with w the Akaike weight of
//     the one chooseAir passed over (Burnham and Anderson, Model Selection and
//     Multimodel Inference, 2002, §4.3, from memory), added on the rival's side of the
//     interval. It catches run40 (the fan taken for still air) but widens clean hot
//     curves whose moving-air rival is close in AIC and far in time (run09, run19,
//     run41): at 4 windows 79 / 86 / 84 %, 0.49. With the default at 1.75 windows: 77 /
//     86 / 80 %, 0.37, but dense 73 / 86 / 82 % and the cell rests at 50 % elapsed 67 →
//     62 % (TestAccuracyReal); at 2.5 windows 77 / 86 / 82 %, 0.42, dense 77 / 86 /
//     82 %. Each is a step along the same trade (dense at 50 % loses the warm measured
//     run11 and run16, misses of 0.1 at width 0.19), so none was taken.
//   - Neither the emissivity refinement's move (the grid's best against the refined
//     emissivity) nor the forecast's sensitivity to the unknown specimen's length (×¼,
//     ×4) tracks the clean curves' misses (run23 moves 0.18 and misses by 0.02; run24
//     moves 0.07 and misses by 0.09).
//
// With a description the median width at 25 % is 0.3003, set by the 28th of 52 finite
// widths (run47, a thick oven specimen, miss 0.09); the clean curves sit at 0.21–0.24
// with the default at 1 window, and 93 % are held.
// Why the "not before now" answers (issue 12, measured after the diagnosis above; go
// test ./predict -run TestIntervalDiagnosis -intervaldiag -diagfrac 0.25 -v). Each came
// from predictedFrom's open-ended branch: the fit reaches the target, but the target lies
// within u (Z times the fitted settling temperature's standard error, widened for
// correlated residuals, plus the misfit) of the fitted level, so the late end is
// dropped. The early end was the sooner of the closed interval's (clamped at the last
// reading) and the profile's (notBefore), raised by speedFloor when the readings slow
// steadily. Per case at 25 % elapsed, without a description:
//
//   - run39 (fan, sensor at the centre of a thin cylinder): fitted level 3 °C (room
//     19 °C), u 60 K. The profile's bound fell 4 s short of the last reading, and
//     speedFloor refused because the first quarter was slower than the second: the
//     sensor's lag behind the surface. speedFloor now lets off such a first quarter:
//     not before 303 s, truth 406 s.
//   - The ovens without a set point run42, run44, run47 (readings rising away from the
//     room, speedBound): refused for the same first quarter; now not before 3696, 740
//     and 789 s, truths 7746, 1431 and 1532 s. Still no central estimate then; since
//     enclosureForecast (the baseline at the room left out, the level fitted with no
//     room prior) run42 and run44 get one at 25 %: 11 and 1.1 % off, both intervals
//     holding the truth. run47 (a thick sphere, centre sensor) keeps "not before".
//   - run37 (fan, centre of a slab, Bi 0.42): fitted level −0.7 °C, u 140 K; quarter
//     speeds 0.034, 0.060, 0.061, 0.055 K/s, the lag's peak, the second and third not
//     apart beyond the noise, so no floor; the profile's bound (its model-form term at
//     the backtest's k 0.65) lies before the last reading. Kept.
//   - run36 (fan, centre of a cylinder, Bi 0.64): the readings still speed up in every
//     quarter (0.0007 to 0.016 K/s), the exponential alone is not resolved, the fitted
//     level 4 °C ± 124 K: nothing in the readings bounds the crossing yet. Kept.
//   - run17 (warm sphere, surface sensor): a door opened at 382 s, the cutoff is at
//     396 s; the last quarter is faster than the third, the fit mismatched (0.27 K of
//     structure beside 0.08 K of noise), its level 37 °C (room 23.5 °C), backtest k
//     1.18: the profile's bound lies before the segment began. Kept.
//
// A closed interval for them was not given: the late end would have to come from a
// settling temperature the readings do not resolve (standard errors of 4.5–124 K), all
// four targets lie inside the room prior's 22 ± 2×8 °C so no room it allows bounds them
// either, and the delta method's symmetric interval does not hold once some allowed
// settling temperatures never reach the target (its closed intervals would have held
// these four truths, at widths of 1.9 to 54 times the remaining time). At 10 % elapsed
// the "not before now" answers are mostly lag phases (run15, run37, run38: quarter
// speeds rising) and one straight stretch, run01, whose closed early end at the last
// reading hid the profile's bound of 8967 s (truth 19843 s): predictedFrom now takes
// the profile's bound when the closed early end is the last reading itself.
//
// Measured with both changes (engine without a description, coverage at 10 / 25 / 50 %
// elapsed; before → after): benchmark 79 / 86 / 82 → 82 / 93 / 84 %, median width at
// 25 % 0.45 unchanged (the new answers are open-ended); dense 77 / 86 / 86 → 86 / 89 /
// 86 %; thick specimens at 25 % 79 → 86 %; the measured curves at 25 % 54 → 55 %. With
// a description: 82 / 93 / 91 → 84 / 93 / 93 %, dense at 10 % 80 → 86 %, thick at 50 %
// 79 → 86 %; widths unchanged. No open-ended bound after
// the truth in any table. Misses without a closed interval at 25 %: 7 of 8 → 3 of 4
// (dense 7 of 8 → 5 of 6); at 10 %: 11 of 12 → 9 of 10; at 50 %: 4 of 10 → 3 of 9. With
// that room a lighter default (priorWindows 1) meets the width goal at 25 % (91 %, 0.28;
// dense 86 %, 0.25) but loses coverage at 50 % (84 → 77 %) and 10 % (82 → 79 %): the
// same trade as before, not taken. Found on the way, and there before: a two-stage oven
// (150 °C, then 200 °C from 2,400 s) read through a sensor 300 s behind its surface got
// one late "not before" at 2,700 s in each of 10 noise seeds — the sensor had only begun
// to show the step, so its last quarters still slowed steadily (TestSpeedBoundNeverLate's
// two-stage oven is lumped, without the lag). speedFloor now also refuses when the last
// quarter's later half is faster than its earlier one beyond the noise: no late bound
// in the 10 seeds, and no table moves (TestSpeedBoundThroughCoreLag).
//
// The sizing itself, measured again (issue 12, the width goal; measured on 247ba01's
// engine; go test ./predict -run TestIntervalCoverage -intervalcov -v, add -dense;
// coverage at 10 / 25 / 50 % elapsed, median width at 25 %). Sizing acts only on
// the closed intervals, and they over-cover only early. Benchmark without a
// description: 34 of 35, 41 of 42 and 43 of 49 held. With one: 39/41, 51/52, 51/54.
// Dense: 35/37, 42/43, 44/50 and 41/43, 50/52, 48/53. The floors have no room at 10 and
// 50 %: 49 and 48 of 56 held, 48 needed. The open-ended answers and unanswered ovens
// take the rest of the misses there. Every variant below that narrows the 25 %
// intervals narrows the 50 % ones as well, and there the clean curves run15 and run45
// miss by 0.108 and 0.138 of the remaining time with half-widths of 0.12 and 0.146.
// No variant was taken:
//
//   - Double counting (taken since, for non-handling targets' closed intervals only;
//     see backtestModelError). A backtest window's miss holds the head fit's parameter
//     error, and the final interval carries the parameter covariance again.
//     Subtracting each window's share (the head's delta-method variance at the window,
//     inflated as the final one is) first moved the benchmark from 88 / 93 / 86 % to
//     89 / 95 / 84 %, width 0.45 → 0.43, and was not taken: without a description at
//     50 % it fell below 85 % (run50: miss 0.434 of the remaining time, half-width
//     0.451 → 0.418). Measured again on a5e22da (the open-ended answers raised since
//     hold more): 95 / 98 / 89 → 95 / 98 / 88 % without a description, 88 / 93 / 95 →
//     88 / 93 / 91 % with one, width at 25 % 0.45 → 0.43 and 0.300 → 0.279. Applied to
//     every bound it put one "not before" after the truth (dense run36, a thick
//     cylinder's centre sensor in a fan, at 25 %: the profile's and the closed early
//     end both rest on the model-form term, and the lumped exponential through a
//     lagging sensor's readings is no lower bound without it), so the open-ended
//     bounds and handling targets keep the gross term.
//   - Student's t with Welch–Satterthwaite degrees of freedom. The form term's k² was
//     estimated from the prior's windows plus the backtest's. Widths grow about 5 %
//     (0.45 → 0.47, 0.300 → 0.320) and no coverage changes anywhere. With the
//     subtraction above, the 50 % figure stays at 84 %.
//   - The residuals' effective degrees of freedom, n·(1 − ρ)/(1 + ρ), for Z. Coverage
//     falls: benchmark at 50 % 86 → 84 %, measured curves at 25 % 71 → 70 %. A larger
//     Z also widens the settling temperature's u, and closed intervals become
//     open-ended.
//   - Growth h·(h/span)^p instead of p = ½. The closed intervals' over-coverage
//     follows no power of h/span: over-covered at 9 and 3 spans, calibrated at 1. At
//     p = ¼ the width is 0.35 (0.245 with a description), but coverage at 10 % falls
//     88 → 84 % (86 → 80 %; dense 88 → 82 %). At p = 0 the width is 0.26, with 84 %
//     at 10 % and 82 % at 50 %.
//   - A lighter default, judged on held-out halves. priorWindows 2 gives a width of
//     0.39 on the even cases and 82 % on the odd cases at 50 %. At 1: 0.32, odd 82 %
//     at 50 %, dense odd 75 % at 10 %. The clean curves' three heads agree (raw k
//     0.001–0.04). Weighting the default by how well the heads agree therefore acts on
//     those curves as this lighter default does.
//   - Centring. Of the 6 closed misses at 50 %, 4 have the truth before the early end
//     (forecast late: run12, run22, run40, run53). An interval in log-time lengthens
//     the late side, which is the wrong side for those 4.
//
// priorWindowsNet: the net term (backtestModelError) weighs the default as 1 window
// against the backtest's windows, as with a description; the gross term, for handling
// targets and "not before" bounds, keeps priorWindows. The 4 windows were sized for
// the gross term, whose misses still held the refitted heads' parameter error; net of
// it, the curve's own backtest is the better evidence. Measured on the merged code of
// 2026-12-04 against 4 windows (go test ./predict -run
// 'TestAccuracy(Table|Real|Thick)$|TestIntervalCoverage' -intervalcov -v, and -dense),
// without a description at 10 / 25 / 50 % elapsed: coverage 95 / 98 / 95 → 93 / 96 /
// 89 %, the closed intervals alone holding 34 of 36, 42 of 44 and 44 of 50; median
// width at 25 % 0.43 → 0.25 (issue 12's 0.3; held-out halves 0.267 and 0.249, 96 %
// each at 25 %, 96 and 82 % at 50 %); dense 96 / 96 / 98 → 95 / 96 / 91 %, 0.42 →
// 0.23. On the measured curves, data the engine never saw: coverage 58 / 88 / 95 → 54
// / 88 / 95 % (the cell rests at 10 % 100 → 92 %), medians unchanged. Thick specimens
// without a description at 25 / 50 %: 100 / 93 → 93 / 86 %. On the helper's branch,
// before the ambient sensor's offset joined the interval (AmbientOffset), it had cost
// the cell rests at 50 % 71 → 67 %; not taken then. The default only on fitted
// ambients (the measured ones kept at 4) left the width at 0.41: the 21 cases with a
// measured ambient set the median.
const (
	defaultModelError    = 0.14
	priorWindows         = 4.0
	priorWindowsSpecimen = 1.0
	priorWindowsNet      = 1.0
	maxModelError        = 1.5
)

// backtestModelError returns the model-form coefficient for the forecasts of fit m of
// segment p. Each window after each cutoff gives a time miss and its growth term
// g = h·sqrt(h/span); the backtest's coefficient is k² = Σmiss²/Σg² (a least-squares
// fit of |miss| = k·g, so the short horizons just past a cutoff, whose misses are
// mostly the level misfit the interval already carries, weigh little), pooled with
// the default 0.14 at weight priorWindows (priorWindowsSpecimen with a described
// specimen) against the n windows for gross, priorWindowsNet (the same as with a
// description) for k, and gross is never less than k. The default alone
// when the segment is too short to backtest or the refit fails.
//
// k is net of the parameter error: each window's miss holds the refitted head's own
// parameter error (its delta-method variance of the crossing at the window, inflated
// for correlated residuals as the final interval's is), and the final interval carries
// the parameter covariance again, so Σmiss² less Σ of those variances is the model
// form's share. gross keeps them: IntervalSettings' bound, for a handling target's
// interval and every "not before", which must never err on the unsafe side and were
// validated with it (without a description, 0 late bounds in every table; with k
// alone, dense run36 at 25 % got one). On the benchmark at 10 / 25 / 50 % elapsed
// (go test ./predict -run TestIntervalCoverage -intervalcov -v) the net term moved
// coverage 95 / 98 / 89 → 95 / 98 / 88 % without a description and 88 / 93 / 95 →
// 88 / 93 / 91 % with one, the median width at 25 % 0.450 → 0.432 and 0.300 → 0.279
// (the 0.3 met with a description; without one since priorWindowsNet, 0.25). The cases the net term loses at 50 %:
// run50 without and with the description (a sphere warming from −7 °C to a target
// 1 K under a 23 °C room, a draught mid-record; early ends −0.017 → +0.015 and −0.034 →
// +0.007 of the remaining time) and run36 described (a draught after the cutoff
// hastens the crossing: early end −0.035 → +0.013).
//
// What those misses lacked is the settling temperature's own model-form error. A
// fitted settling temperature is an extrapolation of the curve's asymptote, and its
// covariance sees only the noise: run50's at 50 % elapsed is 22.21 °C (truth 23.00)
// with the 22 °C target outside its 90 % range; run53 22.43, run55 23.63. A target near
// the settling temperature takes that error through the slow end of the curve, which
// no growth law in the horizon follows: the time error is δT∞·(1/r − 1/r_last)
// (ambientTerm). ambient sizes δT∞ from the latest head (the refit at 70 %): how far
// its settling temperature lies from the whole segment's beyond the head's own
// standard error. The mean over all three heads widened more (the 30 % head's
// settling temperature is barely resolved): coverage at 50 % 95 / 95 %, dense 98 %
// (over the range), thick described at 25 % width 0.65 → 1.13 as well. With the
// latest head, against the net term alone (go test ./predict -run
// 'TestAccuracy(Table|Thick)$|TestIntervalCoverage' -intervalcov -v, and -dense):
// benchmark coverage at 10 / 25 / 50 % without a description 95 / 98 / 88 → 95 / 98 /
// 89 %, with one 88 / 93 / 91 → 89 / 93 / 95 %, widths at 25 % unchanged (0.432, 0.279);
// dense 95 / 96 / 91 → 96 / 96 / 95 % and 86 / 89 / 91 → 88 / 91 / 95 % (widths 0.41
// and 0.23 → 0.25); the cases the net term lost are held again (run50 at 50 % without
// the description: interval −0.548 to +1.415 of the remaining time), and run38 at 10 %
// described. The cost is on thick specimens described: median width 1.19 / 0.65 /
// 0.33 → 2.37 / 1.13 / 0.70 at 10 / 25 / 50 %, coverage 64 / 79 / 79 → 71 / 79 / 86 %
// (run27 at 25 %: 0.38 → 3.79 wide, still holding the truth). The measured curves do
// not move (a measured ambient has no such term).
func backtestModelError(p LumpedProblem, m fitted, opt AnalyzeOptions) backtestTerms {
	var sm, sg, sp float64
	var n int
	var last []windowMiss
	for _, share := range backtestCutoffs {
		ws := backtestAt(p, m, share, opt)
		for _, w := range ws {
			sm += w.miss * w.miss
			sg += w.growth * w.growth
			sp += w.param
			n++
		}
		if len(ws) > 0 {
			last = ws
		}
	}
	if n == 0 || !(sg > 0) {
		return backtestTerms{k: defaultModelError, gross: defaultModelError}
	}
	w, wn := priorWindows, priorWindowsNet
	if opt.Specimen != nil {
		w, wn = priorWindowsSpecimen, priorWindowsSpecimen
	}
	pool := func(sm, w float64) float64 {
		k2 := (w*defaultModelError*defaultModelError + float64(n)*sm/sg) / (w + float64(n))
		return min(math.Sqrt(k2), maxModelError)
	}
	// The gross term is never the narrower: pooled with the heavier prior weight it
	// can come out under the net one (run17 at 50 %: 1.256 against 1.436), and
	// handling targets and "not before" bounds, which take it, must never be narrower
	// than any other target's.
	k := pool(max(sm-sp, 0), wn)
	bt := backtestTerms{k: k, gross: max(pool(sm, w), k), n: n}
	if p.Ambient == nil {
		d := last[0].ambient - m.ambient()
		bt.ambient = math.Sqrt(max(d*d-last[0].ambientErr*last[0].ambientErr, 0))
	}
	return bt
}

// backtestTerms are the backtest's model-form terms: k, net of the refitted heads'
// parameter error, and gross, with it (backtestModelError), from n windows; and
// ambient, the settling temperature's model-form standard deviation (K): how far the
// latest head's fitted settling temperature lies from the whole segment's beyond the
// head's own standard error (zero with a measured ambient).
type backtestTerms struct {
	k, gross, ambient float64
	n                 int
}

// windowMiss is one backtest window's time miss (s), growth term h·sqrt(h/span) and
// the refitted head's own parameter variance of the crossing at the window (s²), with
// the head's settling temperature and its standard error (°C, K).
type windowMiss struct{ miss, growth, param, ambient, ambientErr float64 }

// backtestAt refits m's model to the readings of p up to share of its span and
// returns each window of the readings after it: the window's mean miss (readings
// minus refitted curve, corrected for a measured ambient's change and for the noise
// left in the mean) turned into time through the curve's slope, and the growth term
// at the window's centre.
func backtestAt(p LumpedProblem, m fitted, share float64, opt AnalyzeOptions) []windowMiss {
	n := len(p.Times)
	t0, tn := p.Times[0], p.Times[n-1]
	cut := t0 + share*(tn-t0)
	c := 0
	for c < n && p.Times[c] <= cut {
		c++
	}
	if c < minPointsH || n-c < 2*backtestWindows {
		return nil
	}
	head := LumpedProblem{Times: p.Times[:c], Celsius: p.Celsius[:c]}
	if p.Ambient != nil {
		head.Ambient = p.Ambient[:c]
	}
	g := refit(head, m, opt)
	if g == nil {
		return nil
	}
	tc, span := p.Times[c-1], p.Times[c-1]-t0
	sigma := g.rmse()
	var out []windowMiss
	width := (tn - tc) / backtestWindows
	for w := range backtestWindows {
		lo, hi := tc+float64(w)*width, tc+float64(w+1)*width
		var sum, st float64
		var k int
		for i := c; i < n; i++ {
			if p.Times[i] > lo && p.Times[i] <= hi {
				miss := p.Celsius[i] - g.value(p.Times[i])
				if p.Ambient != nil {
					miss -= p.Ambient[i] - p.Ambient[c-1]
				}
				sum, st, k = sum+miss, st+p.Times[i], k+1
			}
		}
		if k == 0 {
			continue
		}
		mean, tm := sum/float64(k), st/float64(k)
		level := math.Sqrt(max(mean*mean-sigma*sigma/float64(k), 0))
		rate := math.Abs(g.value(tm+1)-g.value(tm-1)) / 2
		h := tm - tc
		if !(rate > 0) || !(h > 0) || !(span > 0) {
			continue
		}
		param := 0.0
		if _, v, _, ok := g.crossing(g.value(tm), false); ok {
			rho, _ := g.residuals()
			infl := Inflation(rho, opt.Interval.withDefaults().MaxInflation)
			param = max(v, 0) * infl * infl
		}
		out = append(out, windowMiss{level / rate, h * math.Sqrt(h/span), param, g.ambient(), g.ambientErr()})
	}
	return out
}

// refit fits m's model again to head: the lumped exponential, the h(T) model with
// the same surface law, or the conduction models for the specimen; nil when the fit
// fails.
func refit(head LumpedProblem, m fitted, opt AnalyzeOptions) fitted {
	lr, err := FitLumped(head, &opt.Fit)
	switch h := m.(type) {
	case lumpedFitted:
		if err != nil {
			return nil
		}
		return lumpedFitted{&lr}
	case hFitted:
		start := &lr
		if err != nil {
			start = roughStart(head)
		}
		if start == nil {
			return nil
		}
		hp := HProblem{Times: head.Times, Celsius: head.Celsius, Ambient: head.Ambient, Law: h.r.Law}
		if head.Ambient == nil && !opt.enclosure {
			hp.AmbientPrior, hp.AmbientPriorSD = roomPrior, roomPriorSD
		}
		r, err := fitH(hp, start)
		if err != nil {
			return nil
		}
		return hFitted{retryFromPrior(&r, []HProblem{hp}, func(hps []HProblem, s *LumpedResult) *HResult {
			a, err := fitH(hps[0], s)
			if err != nil {
				return nil
			}
			return &a
		})}
	case *condFitted:
		if opt.Specimen == nil {
			return nil
		}
		cr, err := fitConduction(head, opt.Specimen)
		if err != nil || cr.m.fit == nil {
			return nil
		}
		return cr.m
	}
	return nil
}

// intervalFor returns the interval settings for the forecasts of fit m of segment p:
// the caller's, with a ModelError left at zero sized by the backtest (with a note) and
// a Z left at zero taken from Student's t with the fit's residual degrees of freedom,
// so that a sparse record (Rumford's 13 readings) gets the wider quantile its few
// readings call for. free is the number of fitted parameters.
func intervalFor(f *Forecast, p LumpedProblem, m fitted, free int, opt AnalyzeOptions) IntervalSettings {
	s := opt.Interval
	if s.ModelError == 0 {
		bt := backtestModelError(p, m, opt)
		k, n := bt.k, bt.n
		s.ModelError, s.bound, s.ambientForm = k, bt.gross, bt.ambient
		if n > 0 {
			f.Notes = append(f.Notes, fmt.Sprintf(
				"Interval sized by the curve's own backtest: refitted at 30, 50 and 70 %% of the segment, the model's forecasts of the later readings give a model-form term of %.2f of the remaining time (%.2f by default).",
				k, defaultModelError))
		}
	}
	if s.Z == 0 {
		s.Z = studentQuantile(len(p.Times) - free)
	}
	return s
}

// studentQuantile returns the 95th percentile of Student's t with dof degrees of
// freedom (a two-sided 90 % interval), 1.645 from 200 on, and that of 1 degree below
// 1.
func studentQuantile(dof int) float64 {
	if dof >= 200 {
		return 1.645
	}
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(max(dof, 1))}.Quantile(0.95)
}
