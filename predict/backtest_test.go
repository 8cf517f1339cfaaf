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
		k, gross, n := backtestModelError(c.p, lumpedFitted{&lr}, AnalyzeOptions{})
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
	k, gross, _ := backtestModelError(p, lumpedFitted{&lr}, AnalyzeOptions{})
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
