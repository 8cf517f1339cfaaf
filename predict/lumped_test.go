package predict

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

// synth makes n readings of Tamb + θi·exp(−t/τ) over span seconds, with Gaussian
// noise of standard deviation noise and quantised to step °C (0: not quantised).
func synth(rng *rand.Rand, n int, span, amb, exc, tau, noise, step float64) LumpedProblem {
	p := LumpedProblem{Times: make([]float64, n), Celsius: make([]float64, n)}
	for i := range n {
		t := span * float64(i) / float64(n-1)
		y := amb + exc*math.Exp(-t/tau) + noise*rng.NormFloat64()
		if step > 0 {
			y = step * math.Round(y/step)
		}
		p.Times[i], p.Celsius[i] = t, y
	}
	return p
}

func constant(n int, v float64) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = v
	}
	return s
}

// within reports whether got is within k standard errors of want.
func within(got, want, se, k float64) bool {
	return !math.IsNaN(se) && math.Abs(got-want) <= k*se
}

// The synthetic curves are our own; the tolerance is 4 reported standard errors
// (about 1 in 16,000 for a correct Gaussian standard error), inflated by the
// autocorrelation factor the forecaster uses, because 0.1 °C quantisation of a slow
// curve leaves correlated residuals.
func TestFitLumpedRecoversParameters(t *testing.T) {
	cases := []struct {
		name                string
		amb, exc, tau, span float64
		noise               float64
		n                   int
		measured            bool
	}{
		{"fast cooling fitted ambient", 22, 180, 60, 400, 0.05, 400, false},
		{"slow cooling fitted ambient", 20, 300, 1800, 5400, 0.3, 1000, false},
		{"heating fitted ambient", 23, -40, 300, 1500, 0.1, 300, false},
		{"cooling measured ambient", 21, 150, 900, 1200, 0.2, 500, true},
		{"partial decay measured ambient", 21, 150, 3000, 1500, 0.3, 500, true},
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := synth(rng, c.n, c.span, c.amb, c.exc, c.tau, c.noise, 0.1)
			if c.measured {
				p.Ambient = constant(c.n, c.amb)
			}
			r, err := FitLumped(p, nil)
			if err != nil {
				t.Fatalf("FitLumped: %v", err)
			}
			k := 4 * Inflation(r.Rho, 5)
			if !within(r.Tau, c.tau, r.TauErr, k) {
				t.Errorf("tau = %g ± %g, want %g", r.Tau, r.TauErr, c.tau)
			}
			if !within(r.Excess, c.exc, r.ExcessErr, k) {
				t.Errorf("excess = %g ± %g, want %g", r.Excess, r.ExcessErr, c.exc)
			}
			if c.measured {
				if r.AmbientErr != 0 || r.Ambient != c.amb {
					t.Errorf("measured ambient = %g ± %g, want %g ± 0", r.Ambient, r.AmbientErr, c.amb)
				}
			} else if !within(r.Ambient, c.amb, r.AmbientErr, k) {
				t.Errorf("ambient = %g ± %g, want %g", r.Ambient, r.AmbientErr, c.amb)
			}
			// The RMSE of noise plus uniform quantisation error is sqrt(σ² + 0.1²/12).
			wantRMSE := math.Sqrt(c.noise*c.noise + 0.01/12)
			if math.Abs(r.RMSE-wantRMSE) > 0.2*wantRMSE {
				t.Errorf("RMSE = %g, want %g within 20 %%", r.RMSE, wantRMSE)
			}
			if r.TauErr <= 0 || r.TauErr > 0.2*c.tau {
				t.Errorf("tau stderr = %g, want in (0, %g]", r.TauErr, 0.2*c.tau)
			}
		})
	}
}

// Exact data: the fit must return the generating parameters to near machine precision.
func TestFitLumpedExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	p := synth(rng, 200, 600, 25, 175, 120, 0, 0)
	r, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{{"tau", r.Tau, 120}, {"excess", r.Excess, 175}, {"ambient", r.Ambient, 25}} {
		if math.Abs(c.got-c.want) > 1e-6*math.Abs(c.want) {
			t.Errorf("%s = %.12g, want %g", c.name, c.got, c.want)
		}
	}
	// With τ found to a relative 1e-8 (the default TauTol) the residuals are at most
	// θi·max(x·e^−x)·1e-8 ≈ 6e-7 °C.
	if r.RMSE > 1e-6 {
		t.Errorf("RMSE = %g on exact data", r.RMSE)
	}
}

// Rumford's cannon: T = 60 + 70·exp(−θ·t) °F, ambient and initial excess fixed, fitted
// θ ≈ 0.009416 per minute (Bates & Watts 1988, via shared/realdata/README.md, where
// the figure is from an independent quick fit and recalled from the book). The data
// are copied in testdata/predict/rumford.csv with their source.
func TestFitLumpedRumford(t *testing.T) {
	tm, temp := readRumford(t)
	p := LumpedProblem{Times: tm, Celsius: temp, Ambient: constant(len(tm), 60), FixExcess: true, Excess: 70}
	r, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	// The figure is quoted to 4 significant digits, so allow one unit of the last one.
	theta := 1 / r.Tau
	if math.Abs(theta-0.009416) > 0.000001 {
		t.Errorf("theta = %.7f per minute, want 0.009416 (Bates & Watts 1988 via shared/realdata)", theta)
	}
	if r.Free != 1 || r.ExcessErr != 0 || r.AmbientErr != 0 || !(r.TauErr > 0) {
		t.Errorf("free = %d, stderrs (%g, %g, %g): want 1 free parameter, only tau with a stderr",
			r.Free, r.AmbientErr, r.ExcessErr, r.TauErr)
	}
}

// Incropera 6th ed. Example 5.1 (via shared/reference section 2.6): a junction with
// τ = 1 s, Ti = 25 °C, in gas at 200 °C. A curve made from the book's inputs must fit
// back to τ = 1 s.
func TestFitLumpedIncropera51(t *testing.T) {
	p := LumpedProblem{}
	for i := 0; i <= 40; i++ {
		tt := 0.05 * float64(i) // 2 s of readings at 20 Hz
		p.Times = append(p.Times, tt)
		p.Celsius = append(p.Celsius, 200+(25-200)*math.Exp(-tt/1))
	}
	r, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(r.Tau-1) > 1e-6 || math.Abs(r.Ambient-200) > 1e-4 || math.Abs(r.Excess+175) > 1e-4 {
		t.Errorf("fit = (Tamb %g, θi %g, τ %g), want (200, −175, 1) (Incropera Ex. 5.1)", r.Ambient, r.Excess, r.Tau)
	}
}

func TestFitLumpedFailures(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	flat := synth(rng, 50, 100, 20, 0, 10, 0.05, 0)
	line := LumpedProblem{Times: []float64{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}, Celsius: []float64{9, 8, 7, 6, 5, 4, 3, 2, 1, 0}}
	cases := []struct {
		name   string
		p      LumpedProblem
		want   error
		status FitStatus
	}{
		{"empty", LumpedProblem{}, ErrTooFewPoints, FitTooFewPoints},
		{"three points", LumpedProblem{Times: []float64{0, 1, 2}, Celsius: []float64{3, 2, 1}}, ErrTooFewPoints, FitTooFewPoints},
		{"no span", LumpedProblem{Times: make([]float64, 10), Celsius: make([]float64, 10)}, ErrShortSpan, FitShortSpan},
		{"straight line", line, ErrNoDecay, FitNoDecay},
		{"flat noise", flat, ErrNoDecay, FitNoDecay},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r, err := FitLumped(c.p, nil)
			if !errors.Is(err, c.want) || r.Status != c.status || !errors.Is(r.Err(), c.want) {
				t.Errorf("err = %v, status %v; want %v, %v", err, r.Status, c.want, c.status)
			}
		})
	}
}

func TestLumpedProblemMisusePanics(t *testing.T) {
	cases := map[string]LumpedProblem{
		"length":          {Times: []float64{0, 1}, Celsius: []float64{1}},
		"ambient length":  {Times: []float64{0, 1}, Celsius: []float64{1, 2}, Ambient: []float64{1}},
		"fix w/o ambient": {Times: []float64{0, 1}, Celsius: []float64{1, 2}, FixExcess: true},
		"unordered":       {Times: []float64{1, 0}, Celsius: []float64{1, 2}},
	}
	for name, p := range cases {
		t.Run(name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Error("no panic")
				}
			}()
			FitLumped(p, nil)
		})
	}
}

func BenchmarkFitLumped2000(b *testing.B) {
	rng := rand.New(rand.NewPCG(7, 8))
	p := synth(rng, 2000, 3600, 22, 180, 900, 0.1, 0.1)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := FitLumped(p, nil); err != nil {
			b.Fatal(err)
		}
	}
}
