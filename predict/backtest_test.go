package predict

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"
)

// The backtest sizes the model-form term from the curve itself: a clean exponential
// (the lumped model's own shape) gets less than the default 0.14, a curve made of two
// exponentials with very different time constants (a shape no single exponential
// follows) gets more, and a segment too short to cut gets the default.
func TestBacktestModelError(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 42))
	clean := synth(rng, 400, 3000, 22, 60, 900, 0.05, 0.1)
	two := LumpedProblem{}
	for i := range 400 {
		s := 3000 * float64(i) / 399
		y := 22 + 40*math.Exp(-s/300) + 30*math.Exp(-s/4000) + 0.05*rng.NormFloat64()
		two.Times, two.Celsius = append(two.Times, s), append(two.Celsius, 0.1*math.Round(y/0.1))
	}
	short := synth(rng, 15, 300, 22, 60, 900, 0.05, 0.1)
	for _, c := range []struct {
		name     string
		p        LumpedProblem
		lo, hi   float64
		windows0 bool
	}{
		{"clean exponential", clean, 0, 0.9 * defaultModelError, false},
		{"two time constants", two, 1.5 * defaultModelError, maxModelError, false},
		{"too short to cut", short, defaultModelError, defaultModelError, true},
	} {
		lr, err := FitLumped(c.p, nil)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		bt := backtestModelError(c.p, lumpedFitted{&lr}, AnalyzeOptions{})
		k, gross, n := bt.k, bt.gross, bt.n
		if k < c.lo || k > c.hi || (n == 0) != c.windows0 {
			t.Errorf("%s: model-form term %.3f from %d windows, want %.3f–%.3f (no windows: %v)", c.name, k, n, c.lo, c.hi, c.windows0)
		}
		// The gross term keeps the heads' parameter error, so it is never the smaller.
		if gross < k || gross > maxModelError {
			t.Errorf("%s: gross model-form term %.3f, want %.3f–%.3f", c.name, gross, k, maxModelError)
		}
	}
}

// The clean curve's interval is narrower than with the fixed default term, still
// holds the true crossing, and the notes say how it was sized.
func TestAnalyzeBacktestInterval(t *testing.T) {
	rng := rand.New(rand.NewPCG(43, 44))
	p := synth(rng, 300, 1500, 22, 60, 900, 0.05, 0.1)
	truth := 900 * math.Log(60/10.0) // crossing of 32 °C
	tg := []Target{{Name: "t", Celsius: 32}}
	sized := Analyze(p, t0, tg, AnalyzeOptions{})
	fixed := Analyze(p, t0, tg, AnalyzeOptions{Interval: IntervalSettings{ModelError: defaultModelError}})
	width := func(f *Forecast) time.Duration { return f.Targets[0].Latest.Sub(f.Targets[0].Earliest) }
	at := t0.Add(seconds(truth))
	tf := sized.Targets[0]
	if tf.State != StatePredicted || at.Before(tf.Earliest) || at.After(tf.Latest) {
		t.Errorf("state %s, interval %v–%v does not hold the true crossing %v", tf.State, tf.Earliest, tf.Latest, at)
	}
	if !(width(sized) < width(fixed)) {
		t.Errorf("backtest interval %v, not narrower than the fixed term's %v", width(sized), width(fixed))
	}
	if !strings.Contains(strings.Join(sized.Notes, " "), "backtest") {
		t.Errorf("notes %q do not say the interval was sized by the backtest", sized.Notes)
	}
}

// Student's t 95th percentiles (two-sided 90 %) against the printed table of the
// NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.2 (values from
// memory, each the common three-decimal table entry).
func TestStudentQuantile(t *testing.T) {
	for _, c := range []struct {
		dof  int
		want float64
	}{{1, 6.314}, {5, 2.015}, {10, 1.812}, {11, 1.796}, {30, 1.697}, {100, 1.660}, {500, 1.645}} {
		if got := studentQuantile(c.dof); math.Abs(got-c.want) > 0.0015 {
			t.Errorf("t(0.95, %d) = %.4f, want %.3f", c.dof, got, c.want)
		}
	}
}

// The backtest's misses already hold the refitted heads' parameter error, which the
// final interval carries again through the covariance: a non-handling target's
// interval takes the net model-form term and is narrower, while a handling target's
// (its late end plans when a part may be touched) keeps the gross term and the interval
// it had before the correction, as does any "not before" bound. Same clean curve as
// TestAnalyzeBacktestInterval (common practice: a crossing's interval is narrower
// once a variance counted twice is counted once; no outside source).
func TestBacktestNetTermNarrowsOnlyNonHandling(t *testing.T) {
	rng := rand.New(rand.NewPCG(43, 44))
	p := synth(rng, 300, 1500, 22, 60, 900, 0.05, 0.1)
	truth := t0.Add(seconds(900 * math.Log(60/10.0))) // crossing of 32 °C
	f := Analyze(p, t0, []Target{{Name: "plain", Celsius: 32}, {Name: "touch", Celsius: 32, Handling: true}}, AnalyzeOptions{})
	plain, touch := f.Targets[0], f.Targets[1]
	lr, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	bt := backtestModelError(p, lumpedFitted{&lr}, AnalyzeOptions{})
	k, gross := bt.k, bt.gross
	if !(k < gross) {
		t.Fatalf("net term %.4f not below the gross %.4f", k, gross)
	}
	for _, tf := range []TargetForecast{plain, touch} {
		if tf.State != StatePredicted || truth.Before(tf.Earliest) || truth.After(tf.Latest) {
			t.Errorf("%s: state %s, interval %v–%v does not hold the true crossing %v", tf.Target.Name, tf.State, tf.Earliest, tf.Latest, truth)
		}
	}
	if !touch.Latest.After(plain.Latest) || !touch.Earliest.Before(plain.Earliest) {
		t.Errorf("handling interval %v–%v not wider on both sides than the plain target's %v–%v", touch.Earliest, touch.Latest, plain.Earliest, plain.Latest)
	}
	// The handling target's interval is the one the gross term alone gives.
	s := IntervalSettings{ModelError: gross, Z: studentQuantile(len(p.Times) - 3)}
	old := Analyze(p, t0, []Target{{Name: "touch", Celsius: 32, Handling: true}}, AnalyzeOptions{Interval: s})
	if d := old.Targets[0].Latest.Sub(touch.Latest); d < -time.Second || d > time.Second {
		t.Errorf("handling late end %v, the gross term's %v", touch.Latest, old.Targets[0].Latest)
	}
}

// The settling temperature's model-form term is the crossing's sensitivity to the
// settling temperature with the curve held through its last reading, times the
// backtest's standard deviation: checked against a central finite difference of the
// exponential's crossing t* = t_last + τ·ln((T_last − T∞)/(T − T∞)) (the derivative
// 1/r − 1/r_last is worked here by hand; no outside source). A target 1 K from the
// settling temperature takes a term many times that of one 28 K from it.
func TestAmbientTermIsTheCrossingsSensitivity(t *testing.T) {
	r := &LumpedResult{Status: FitSuccess, Ambient: 23, Excess: -30, Tau: 3000}
	p := &LumpedProblem{Times: []float64{0, 2500, 5000}, Celsius: []float64{-7, 0, 5}}
	f := newForecaster(lumpedFitted{r}, p, t0, IntervalSettings{ambientForm: 0.5}.withDefaults())
	last := 5000.0
	tl := r.Value(last)
	cross := func(amb, level float64) float64 {
		return last + r.Tau*math.Log((tl-amb)/(level-amb))
	}
	for _, level := range []float64{22, 20, 18} { // the last reading is 17.3 °C
		tStar := cross(r.Ambient, level)
		rate := math.Abs(level-r.Ambient) / r.Tau
		h := 1e-4
		want := 0.5 * math.Abs(cross(r.Ambient+h, level)-cross(r.Ambient-h, level)) / (2 * h)
		if got := f.ambientTerm(tStar, rate); math.Abs(got-want) > 1e-3*want {
			t.Errorf("target %.1f °C: ambient term %.2f s, finite difference %.2f s", level, got, want)
		}
	}
	near := f.ambientTerm(cross(23, 22), 1/r.Tau)
	far := f.ambientTerm(cross(23, 10), 13/r.Tau)
	if !(near > 5*far) {
		t.Errorf("ambient term 1 K from the settling temperature %.0f s, 13 K from it %.0f s", near, far)
	}
	f.p.Ambient = []float64{23, 23, 23}
	if got := f.ambientTerm(cross(23, 22), 1/r.Tau); got != 0 {
		t.Errorf("measured ambient: ambient term %.1f s, want none", got)
	}
}
