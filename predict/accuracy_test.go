package predict

import (
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/predict/benchgen"
)

var updateBench = flag.Bool("update-bench", false, "regenerate testdata/bench with predict/benchgen")

const benchDir = "../testdata/bench"

// The committed benchmark must be what the generator makes (deterministic seed);
// -update-bench rewrites it.
func TestBenchFiles(t *testing.T) {
	if *updateBench {
		if err := benchgen.Write(benchDir); err != nil {
			t.Fatal(err)
		}
	}
	dir := t.TempDir()
	if err := benchgen.Write(dir); err != nil {
		t.Fatal(err)
	}
	names, err := filepath.Glob(filepath.Join(dir, "*"))
	if err != nil || len(names) < 2 {
		t.Fatalf("generated %d files, err %v", len(names), err)
	}
	for _, n := range names {
		fresh, _ := os.ReadFile(n)
		kept, err := os.ReadFile(filepath.Join(benchDir, filepath.Base(n)))
		if err != nil || string(fresh) != string(kept) {
			t.Errorf("%s differs from the generator's output (run go test ./predict -run TestBenchFiles -update-bench): %v", filepath.Base(n), err)
		}
	}
}

// benchIndex reads testdata/bench/index.json.
func benchIndex(t testing.TB) benchgen.Index {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(benchDir, "index.json"))
	if err != nil {
		t.Fatal(err)
	}
	var idx benchgen.Index
	if err := json.Unmarshal(b, &idx); err != nil {
		t.Fatalf("index.json: %v", err)
	}
	return idx
}

// method forecasts the crossing of level from the readings up to now: the predicted
// time (t_s; NaN when it gives an interval without a central estimate) and interval
// (NaN bounds for a method without intervals; hi = +Inf for an open-ended "not
// before lo"); ok is false when it gives no answer at all.
type method func(c CurveFile, level float64) (at, lo, hi float64, ok bool)

// origin anchors the files' time axis for the engine.
var origin = time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC)

// fromForecast reads a forecast's answer: an open-ended interval ("not before",
// Latest zero) has hi = +Inf, and one without a central estimate (At zero) at = NaN.
func fromForecast(tf TargetForecast) (at, lo, hi float64, ok bool) {
	switch tf.State {
	case StatePredicted:
		at, hi = math.NaN(), math.Inf(1)
		if !tf.At.IsZero() {
			at = tf.At.Sub(origin).Seconds()
		}
		if !tf.Latest.IsZero() {
			hi = tf.Latest.Sub(origin).Seconds()
		}
		return at, tf.Earliest.Sub(origin).Seconds(), hi, true
	case StateReached:
		at := tf.At.Sub(origin).Seconds()
		return at, at, at, true
	}
	return 0, 0, 0, false
}

// engine is the daemon's and settle fit's path: Prepare, then Analyze.
func engine(c CurveFile, level float64) (at, lo, hi float64, ok bool) {
	p, onset, _ := Prepare(c.Times, c.Celsius, c.FilledAmbient())
	f := Analyze(p, origin.Add(seconds(onset)), []Target{{Name: "t", Celsius: level}}, AnalyzeOptions{})
	return fromForecast(f.Targets[0])
}

// exponential3 is the free three-parameter exponential T∞ + θi·exp(−t/τ) fitted to
// the same cleaned data (no measured ambient, no model choice, no state rules): its
// fitted crossing with the delta-method interval from its covariance, widened for
// correlated residuals (Inflation), as a statistician would extrapolate it. No answer
// when the fit fails or the fitted curve never reaches the level.
func exponential3(c CurveFile, level float64) (at, lo, hi float64, ok bool) {
	p, onset, _ := Prepare(c.Times, c.Celsius, nil)
	r, err := FitLumped(p, nil)
	if err != nil {
		return 0, 0, 0, false
	}
	t, v, _, ok := lumpedFitted{&r}.crossing(level, false)
	if !ok {
		return 0, 0, 0, false
	}
	half := 1.645 * math.Sqrt(max(v, 0)) * Inflation(r.Rho, 5)
	at = onset + t
	return at, at - half, at + half, true
}

// linearTrend extrapolates a least-squares line through the last 10 minutes, as a
// metrics system would; it has no interval.
func linearTrend(c CurveFile, level float64) (at, lo, hi float64, ok bool) {
	n := len(c.Times)
	now := c.Times[n-1]
	var st, sy, stt, sty, k float64
	for i, t := range c.Times {
		if t >= now-600 && !math.IsNaN(c.Celsius[i]) {
			st, sy, stt, sty, k = st+t, sy+c.Celsius[i], stt+t*t, sty+t*c.Celsius[i], k+1
		}
	}
	den := k*stt - st*st
	if k < 2 || den == 0 {
		return 0, math.NaN(), math.NaN(), false
	}
	b := (k*sty - st*sy) / den
	a := (sy - b*st) / k
	at = (level - a) / b
	if b == 0 || at < now {
		return 0, math.NaN(), math.NaN(), false
	}
	return at, math.NaN(), math.NaN(), true
}

// score is one method's errors at one elapsed fraction.
type score struct {
	errs            []float64 // relative errors; +Inf where the method gave no time
	widths          []float64 // interval widths over the remaining time, where judged
	covered, judged int
	closedCovered   int // of covered, those by a closed interval
	open            int // answers with an open-ended interval ("not before")
	openLate        int // of them, those whose early bound came after the truth
	openVacuous     int // and those that open at the last reading ("not before now")
}

func (s *score) add(tr trial) {
	s.errs = append(s.errs, tr.rel)
	if tr.open {
		s.open++
		if !tr.covered && !tr.vacuous {
			s.openLate++
		}
		if tr.vacuous {
			s.openVacuous++
		}
	}
	if tr.judged {
		s.judged++
		s.widths = append(s.widths, tr.width)
		if tr.covered {
			s.covered++
			if !tr.open {
				s.closedCovered++
			}
		}
	}
}

// row formats the score as a table row's figures: median and 90th-percentile
// relative error (a missing answer or central estimate counts as an infinite error),
// the median over the forecasts with a central estimate, coverage, the coverage by
// closed intervals alone (an open-ended answer counted as a miss), median width ("∞"
// when more than half the intervals are open-ended or missing), the share without a
// central estimate and the share answered with an open-ended interval only or beside
// a central estimate.
func (s *score) row() string {
	cov, closed, width := "-", "-", "-"
	if s.judged > 0 {
		cov = fmt.Sprintf("%.0f %%", 100*float64(s.covered)/float64(s.judged))
		closed = fmt.Sprintf("%.0f %%", 100*float64(s.closedCovered)/float64(s.judged))
		width = "∞"
		if w := quantile(s.widths, 0.5); w < 99 {
			width = fmt.Sprintf("%.2f", w)
		}
	}
	var answered []float64
	for _, e := range s.errs {
		if !math.IsInf(e, 1) {
			answered = append(answered, e)
		}
	}
	ans := "-"
	if len(answered) > 0 {
		ans = pct(quantile(answered, 0.5))
	}
	none := len(s.errs) - len(answered)
	return fmt.Sprintf("%8s %8s %8s %9s %7s %6s %8.0f%% %5.0f%%  (n=%d)", pct(quantile(s.errs, 0.5)), pct(quantile(s.errs, 0.9)),
		ans, cov, closed, width, 100*float64(none)/float64(len(s.errs)), 100*float64(s.open)/float64(len(s.errs)), len(s.errs))
}

// pct formats a relative error as a percentage; "none" for a missing answer and
// ">999%" beyond.
func pct(x float64) string {
	switch {
	case math.IsInf(x, 1):
		return "none"
	case x > 9.99:
		return ">999%"
	}
	return fmt.Sprintf("%.1f%%", 100*x)
}

// tableHead is the header of the figures row() prints.
const tableHead = "  median      p90 answered  coverage  closed  width no point  open"

func quantile(xs []float64, q float64) float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	return s[min(len(s)-1, int(math.Ceil(q*float64(len(s))))-1)]
}

var fractions = []float64{0.10, 0.25, 0.50}

// accuracy scores every method on every case of the benchmark at each fraction of the
// elapsed time to the crossing; keys are "method/fraction/group".
func accuracy(t testing.TB) map[string]*score {
	return scoreCases(t, benchIndex(t).Cases, func(c benchgen.Case) (benchgen.Case, CurveFile) { return c, readBenchCase(t, c) })
}

// scoreCases is accuracy on the given cases, whose curves (and truth) read returns.
func scoreCases(t testing.TB, cases []benchgen.Case, read func(benchgen.Case) (benchgen.Case, CurveFile)) map[string]*score {
	out := map[string]*score{}
	for _, c := range cases {
		sp, err := caseSpecimen(c)
		if err != nil {
			t.Fatalf("%s: %v", c.File, err)
		}
		methods := map[string]method{"engine": engine, "engine+spec": withSpecimen(sp), "exp3": exponential3, "linear": linearTrend}
		c, curve := read(c)
		for _, frac := range fractions {
			for name, m := range methods {
				tr := judge(m, curve, c, frac)
				for _, g := range []string{"all", group(c)} {
					key := fmt.Sprintf("%s/%.2f/%s", name, frac, g)
					if out[key] == nil {
						out[key] = &score{}
					}
					out[key].add(tr)
				}
			}
		}
	}
	return out
}

// readBenchCase reads the curve of one benchmark case.
func readBenchCase(t testing.TB, c benchgen.Case) CurveFile {
	t.Helper()
	f, err := os.Open(filepath.Join(benchDir, c.File))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	curve, err := ReadCurveCSV(f, c.File)
	if err != nil {
		t.Fatal(err)
	}
	return curve
}

// trial is one method's forecast of one case, scored: the relative error of the
// crossing (+Inf without an answer), whether an interval was given (judged) and held
// the truth, and its width over the remaining time to the true crossing.
type trial struct {
	rel, width            float64
	covered, judged, open bool
	vacuous               bool // open-ended from the last reading on: "not before now"
}

// judge runs m on the case's curve up to frac of the time from placement to crossing.
func judge(m method, curve CurveFile, c benchgen.Case, frac float64) trial {
	return judgeAt(m, curve.Until(c.PlacedS+frac*(c.CrossingS-c.PlacedS)), c.Target, c.CrossingS)
}

// judgeAt runs m on the readings part (up to now) for the crossing of level, whose
// true time is truth. A method without intervals (NaN bounds) is not judged on
// coverage; an interval method that gives no answer is, as a miss of infinite width.
// An open-ended interval [lo, ∞) covers a truth at or after lo and has an infinite
// width, except one that opens at the last reading ("not before now" says nothing of
// the time, so it covers nothing); an answer without a central estimate has an infinite error (it counts in
// the error columns as no answer).
func judgeAt(m method, part CurveFile, level, truth float64) trial {
	horizon := truth - part.Times[len(part.Times)-1]
	at, lo, hi, ok := m(part, level)
	tr := trial{rel: math.Inf(1), width: math.Inf(1), judged: !math.IsNaN(lo)}
	if ok {
		if !math.IsNaN(at) {
			tr.rel = math.Abs(at-truth) / horizon
		}
		tr.width = (hi - lo) / horizon
		tr.open = math.IsInf(hi, 1)
		tr.vacuous = tr.open && lo <= part.Times[len(part.Times)-1]+1
		tr.covered = lo <= truth && truth <= hi && !tr.vacuous
	}
	return tr
}

func group(c benchgen.Case) string {
	switch {
	case c.Air == "fan" || c.Air == "oven":
		return c.Air
	case c.Initial < c.Ambient:
		return "warming"
	case c.Hot():
		return "hot"
	}
	return "warm"
}

// TestAccuracyTable prints the benchmark table (go test ./predict -run
// TestAccuracyTable -v): the engine without and with the specimen description
// beside the two baselines, by group. It holds the engine to the floors it reached
// on the independent generator (not the goals, which it does not all meet;
// see README "Forecast accuracy"): at 25 % elapsed, median relative error at most
// 4.5 % without the description (5 % for the hot and the warming specimens; 4 % at 50 %
// elapsed, also for the hot and fan specimens) and 4 % with it, fan cases without it
// at most 6.5 %, fan and oven cases with it at most 7 %, oven cases without it at most
// 6 % (the ovens whose air is not measured forecast from the level their readings
// resolve, enclosureForecast);
// ~90 % interval coverage over all fractions at least 91 % without the description
// (92.9 % measured since the net term weighs the default as one window, priorWindowsNet,
// 94.0 % before; 91.7 % with it; 88.7 % and 90.5 % before peakFloor also raised a
// "not before now" beside a central estimate, for a fixed target within the fitted
// settling temperature's uncertainty, to the soonest the readings' own speed allows;
// 86.9 % with the readings' own speed after a step bounding "not
// before" answers where their direction is not known — peakBound, the ovens without
// set point — alone, 86.3 % with speedFloor letting off the first quarter of a sensor
// lagging its surface and the profile's bound replacing a closed early end at the
// last reading alone, 81.5–82.1 % before either; 74 % before the readings' own speed bounded "not before" answers —
// speedFloor, speedBound — and 81 % before open-ended answers: "not before now" beside
// a central estimate, where a closed interval used to be, counts as a miss) and within
// 88–97 % with it (90.5 % measured since the backtest's term is net of the parameter
// error, 91.7 % before); median width at 25 % elapsed at most 0.5 and 0.29.
func TestAccuracyTable(t *testing.T) {
	if testing.Short() {
		t.Skip("accuracy benchmark skipped with -short")
	}
	sc := accuracy(t)
	t.Log(accuracyTable(sc))
	checkOpenEnded(t, sc)
	for _, c := range []struct {
		key string
		max float64
	}{
		{"engine/0.25/all", 0.04},       // 2.9 % with afterTransient and refineMovingShare merged (3.7 % and 3.5 % on their branches alone; 4.1 % with every branch of 2026-12-03 merged; 4.7 % before the surface law was chosen with the room prior's term, 6.6 % before the unknown specimen's emissivity was refined)
		{"engine/0.25/fan", 0.05},       // 3.7 % with afterTransient and refineMovingShare merged (6.02 % with either alone; run41: still and moving air fit its first quarter alike, see movingair.go)
		{"engine/0.50/fan", 0.04},       // 2.8 % (4.7 % before refineMovingShare)
		{"engine/0.50/hot", 0.04},       // 2.0 % (2.5 % with refineMovingShare alone, 2.7 % before)
		{"engine/0.25/oven", 0.06},      // 2.6 % (no central estimate for half of them before enclosureForecast)
		{"engine/0.25/hot", 0.04},       // 2.9 % (3.0 %, 8.6 %)
		{"engine/0.25/warming", 0.05},   // 4.7 % (2.0 % before lagAmbient, by noise: see cellSegments; 10.8 %)
		{"engine/0.50/all", 0.03},       // 2.3 % with both merged (2.8 % with afterTransient alone, 2.6 % with refineMovingShare alone, 3.2 % before; 3.7 %, 4.7 %)
		{"engine+spec/0.25/all", 0.04},  // 2.8 %
		{"engine+spec/0.25/fan", 0.07},  // 5.5 %
		{"engine+spec/0.25/oven", 0.07}, // 3.7 %
	} {
		if med := quantile(sc[c.key].errs, 0.5); med > c.max {
			t.Errorf("%s: median relative error %.1f %%, floor %.1f %%", c.key, 100*med, 100*c.max)
		}
	}
	// Median interval width over the remaining time at 25 % elapsed (the goal is
	// 0.3): 0.46 and 0.30 measured with the backtest's cutoffs at 30, 50 and 70 % (0.29
	// with the description before smoothAmbient took the first span's mean: run29, with
	// a measured ambient, went from a 16 % miss at width 0.19 to 0.2 % at 0.33, past
	// the median; the floor has 0.01 of room for such a move). Since the backtest's term
	// is net of the heads' parameter error (backtestModelError) 0.43 and 0.279: the
	// floor with the description is raised 0.31 → 0.29, the same 0.01 of room. Without
	// it 0.254 since the net term weighs the default as 1 window (priorWindowsNet): the
	// floor is raised 0.5 → 0.28.
	for key, max := range map[string]float64{"engine/0.25/all": 0.28, "engine+spec/0.25/all": 0.29} {
		if w := quantile(sc[key].widths, 0.5); w > max {
			t.Errorf("%s: median interval width %.2f of the remaining time, floor %.2f", key, w, max)
		}
	}
	for _, c := range []struct {
		method string
		lo, hi float64
	}{{"engine", 0.91, 0.97}, {"engine+spec", 0.88, 0.97}} {
		var covered, judged int
		for _, fr := range fractions {
			s := sc[fmt.Sprintf("%s/%.2f/all", c.method, fr)]
			covered, judged = covered+s.covered, judged+s.judged
		}
		if cov := float64(covered) / float64(judged); cov < c.lo || cov > c.hi {
			t.Errorf("%s: 90 %% interval coverage %.1f %% over %d forecasts, floor %.0f–%.0f %%", c.method, 100*cov, judged, 100*c.lo, 100*c.hi)
		}
	}
}

// checkOpenEnded logs the engine's open-ended answers at each fraction, with and
// without the description, and fails on any whose early bound lies after the true
// crossing: "not before" must never be late.
func checkOpenEnded(t *testing.T, sc map[string]*score) {
	t.Helper()
	for _, m := range []string{"engine", "engine+spec"} {
		for _, fr := range fractions {
			s := sc[fmt.Sprintf("%s/%.2f/all", m, fr)]
			if s.open > 0 {
				t.Logf("%s at %.0f %%: %d open-ended answers, %d of them with the early bound after the true crossing, %d opening at the last reading", m, 100*fr, s.open, s.openLate, s.openVacuous)
			}
			if s.openLate > 0 {
				t.Errorf("%s at %.0f %%: %d open-ended answers with the early bound after the true crossing", m, 100*fr, s.openLate)
			}
		}
	}
}

// accuracyTable formats scores by group, method and elapsed fraction.
func accuracyTable(sc map[string]*score) string {
	var b strings.Builder
	fmt.Fprintf(&b, "\n%-8s %-8s %5s |%s\n", "method", "group", "frac", tableHead)
	for _, g := range []string{"all", "hot", "warm", "warming", "fan", "oven"} {
		for _, m := range []string{"engine", "engine+spec", "exp3", "linear"} {
			for _, fr := range fractions {
				if s := sc[fmt.Sprintf("%s/%.2f/%s", m, fr, g)]; s != nil {
					fmt.Fprintf(&b, "%-8s %-8s %4.0f%% | %s\n", m, g, 100*fr, s.row())
				}
			}
		}
	}
	return b.String()
}
