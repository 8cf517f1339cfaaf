package predict

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// chainStep simulates a step through a chain of first-order lags (time constants
// taus, s; the first stage driven, the last read): every stage starts at from and the
// driven one heads for to from time 0 (a heater switched on: a transistor, its sink
// and the sensor). Read every dt s until end with Gaussian noise of sd °C; small Euler
// steps.
func chainStep(rng *rand.Rand, taus []float64, from, to, dt, end, sd float64) (ts, cs, truth []float64) {
	x := make([]float64, len(taus))
	for i := range x {
		x[i] = from
	}
	return chainFrom(rng, taus, x, to, dt, end, sd)
}

// chainFrom is chainStep with the stages starting at x (not at rest: a step during an
// earlier transient).
func chainFrom(rng *rand.Rand, taus, x []float64, to, dt, end, sd float64) (ts, cs, truth []float64) {
	const h = 0.02
	x = slices.Clone(x)
	next := 0.0
	for s := 0.0; s <= end; s += h {
		if s >= next {
			last := x[len(x)-1]
			ts, truth, cs = append(ts, s), append(truth, last), append(cs, last+sd*rng.NormFloat64())
			next += dt
		}
		in := to
		for i, tau := range taus {
			d := h * (in - x[i]) / tau
			in = x[i]
			x[i] += d
		}
	}
	return ts, cs, truth
}

// TestPeakBoundNeverLate: a part warmed through a chain of lags — its speed first
// rises while the heat reaches the sensor, then stays nearly constant for longer than
// the cutoffs reach, as on the heater board (../shared/realdata) — gets "not before" a
// time after its last reading for a target ahead of it, while its speed still rises
// (bounded by the rate it last rose at) and after, never after the true crossing,
// never a central estimate or a late end; a warming part's handling target is never
// forecast, and no handling target is due or reached before the true crossing. A
// warming part's target may get a central estimate beside the not-before (the
// dead-time fit's, deadtime.go: measured on the heater board, where it beats the
// linear trend; before it, no central estimate was allowed here), never sooner than
// the not-before; its error is logged, not held (it is an estimate). Swept
// over cutoffs every 5 s from 20 s (20 s under -race). Without peakBound the warm-ups'
// cutoffs are all insufficient (no model resolves a level, and the readings do not
// slow quarter by quarter). Our own invented chains: heater and sink (300 s and 40 s),
// and heater, sink and sensor (400, 60 and 15 s), from a 22 °C room toward 62 °C, read
// every second with 0.05 °C of noise; targets near the room (direction unknown) and
// far from it (still at their extreme). And steps against an earlier transient, where
// the speed is not log-concave (the argument does not cover them; peakspeed.go): the
// heater turned up to head for 62 °C while the sink (30 °C) is still colder than the
// sensor (40 °C), so the readings first fall; and a part switched off at 50/40 °C
// toward a 22 °C room — measured, not proven: swept once over 5 noise seeds and four
// more such starts (not kept: 40 s), no bound after the truth.
func TestPeakBoundNeverLate(t *testing.T) {
	for _, c := range []struct {
		name        string
		taus, start []float64 // start: the stages' temperatures (nil: all at 22 °C)
		to, target  float64
		minOpen     int
	}{
		{"heater and sink, near the room", []float64{300, 40}, nil, 62, 29, 3},
		{"heater and sink, far from the room", []float64{300, 40}, nil, 62, 45, 10},
		{"three lags, far from the room", []float64{400, 60, 15}, nil, 62, 42, 8},
		{"turned up while the sink is colder", []float64{300, 40}, []float64{30, 40}, 62, 45, 10},
		{"switched off, warmer sink", []float64{300, 40}, []float64{50, 40}, 22, 35, 10},
	} {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(7, 8))
			start := c.start
			if start == nil {
				start = slices.Repeat([]float64{22}, len(c.taus))
			}
			ts, cs, truth := chainFrom(rng, c.taus, start, c.to, 1, 1500, 0.05)
			side := sign(c.target - start[len(start)-1])
			cross := ts[slices.IndexFunc(truth, func(v float64) bool { return side*(v-c.target) >= 0 })]
			open, estimated := 0, 0
			var errs []float64
			step := 5.0
			if raceEnabled {
				step = 20
			}
			for upTo := 20.0; upTo < cross; upTo += step {
				n := slices.IndexFunc(ts, func(s float64) bool { return s > upTo })
				p, onset, _ := Prepare(ts[:n], cs[:n], nil)
				f := Analyze(p, t0.Add(seconds(onset)), []Target{{Name: "t", Celsius: c.target}, {Name: "handle", Celsius: c.target, Handling: true}}, AnalyzeOptions{})
				h := f.Targets[1]
				if side > 0 && h.State != StateInsufficient {
					t.Fatalf("%.0f s: handling target %s on a warming part", upTo, h.State)
				}
				if due := h.Due(); h.State == StateReached || !due.IsZero() && due.Sub(t0).Seconds() < cross {
					t.Fatalf("%.0f s: handling target %s, due %v, before the true crossing at %.0f s", upTo, h.State, due, cross)
				}
				tf := f.Targets[0]
				if tf.State == StateInsufficient || side < 0 && !tf.Latest.IsZero() {
					continue // a cool-down's fit may close the interval: not this bound's
				}
				// A central estimate (the dead-time fit's, deadtime.go) may stand beside
				// the not-before, never before it; there is never a late end.
				if tf.State != StatePredicted || !tf.At.IsZero() && tf.At.Before(tf.Earliest) || !tf.Latest.IsZero() {
					t.Fatalf("%.0f s: %s at %v [%v, %v]; want insufficient or a not-before (and a central estimate no sooner)", upTo, tf.State, tf.At, tf.Earliest, tf.Latest)
				}
				if side > 0 && !tf.At.IsZero() {
					estimated++
					errs = append(errs, math.Abs(tf.At.Sub(t0).Seconds()-cross)/(cross-ts[n-1]))
				}
				open++
				lo := tf.Earliest.Sub(t0).Seconds()
				if lo > cross {
					t.Errorf("%.0f s: not before %.0f s, after the true crossing at %.0f s", upTo, lo, cross)
				}
				if lo <= ts[n-1] && tf.At.IsZero() {
					t.Errorf("%.0f s: not before %.0f s, not after the last reading", upTo, lo)
				}
			}
			if want := max(1, c.minOpen*5/int(step)); open < want { // fewer cutoffs under -race
				t.Errorf("only %d cutoffs got a not-before, want at least %d", open, want)
			}
			t.Logf("%d cutoffs answered with not-before, none after the crossing at %.0f s; %d with a central estimate beside it", open, cross, estimated)
			if len(errs) > 0 {
				t.Logf("central estimates' median error %.0f %% of the time left", 100*quantile(errs, 0.5))
			}
		})
	}
}

// TestPeakFloorWhileSpeedingUp: while the readings still speed up (the sensor catching
// up after a step) the speed they have shown does not bound the speed to come — the
// last quarter's speed, even taken high, would put the bound after the true crossing —
// so the bound lets the speed go on rising at the rate the last two quarters showed
// (the log-concave speed's tangent), and stays between the last reading and the
// crossing. Past the peak it does too. Our own invented chain (300 s and 40 s, no
// noise): its speed peaks at ln(300/40)·300·40/260 ≈ 93 s (the maximum of
// e^(−t/300) − e^(−t/40)).
func TestPeakFloorWhileSpeedingUp(t *testing.T) {
	ts, _, truth := chainStep(rand.New(rand.NewPCG(1, 2)), []float64{300, 40}, 22, 62, 1, 400, 0)
	for _, c := range []struct {
		upTo  int
		level float64
	}{{40, 29}, {60, 33}, {160, 45}} {
		cross := ts[slices.IndexFunc(truth, func(v float64) bool { return v >= c.level })]
		f := &forecaster{p: &LumpedProblem{Times: ts[:c.upTo+1], Celsius: truth[:c.upTo+1]}}
		lo, ok := f.peakFloor(c.level)
		if !ok || lo <= ts[c.upTo] || lo > cross || math.IsNaN(lo) {
			t.Errorf("first %d s: bound %.1f s (ok %v); want between %.0f s and the crossing at %.0f s", c.upTo, lo, ok, ts[c.upTo], cross)
		}
		if c.upTo > 93 {
			continue
		}
		n := c.upTo + 1
		l := fitQuarter(ts[n-n/4:n], truth[n-n/4:n])
		if flat := ts[c.upTo] + (c.level-l.end)/l.slope; flat <= cross {
			t.Errorf("first %d s: the last quarter's speed alone bounds the crossing at %.1f s, before the crossing at %.0f s: the case does not test the rising speed", c.upTo, flat, cross)
		}
	}
}

// TestPeakFloorFewReadings: soon after a step there are too few readings for quarters
// of 5 (the heater board at 10–25 % of the time to its targets: 5–18 readings), and a
// noisy sensor hides the speed within a short quarter; peakFloor then bounds the
// crossing over thirds or halves, between the last reading and the true crossing.
// Our own invented chains: heater and sink (300 s and 40 s) from rest, cut at 15 and
// 18 s (16 and 19 readings: quarters of 4), no noise; and the same chain started
// mid-transient (heater 36 °C, sensor 32 °C, heading for 62 °C: the heater board's
// heater 2 stepped up while still warming), read with 0.15 °C of noise (heater 2's is
// about 0.06 °C), cut at 20, 25 and 30 s (quarters of 5–7 readings), with 40 noise
// seeds: no bound after the crossing, and at least 90 % of the cutoffs bounded (all
// 240 measured; 54 by quarters alone).
func TestPeakFloorFewReadings(t *testing.T) {
	ts, _, truth := chainStep(rand.New(rand.NewPCG(1, 2)), []float64{300, 40}, 22, 62, 1, 400, 0)
	for _, c := range []struct {
		upTo  int
		level float64
	}{{15, 29}, {18, 33}} {
		cross := ts[slices.IndexFunc(truth, func(v float64) bool { return v >= c.level })]
		f := &forecaster{p: &LumpedProblem{Times: ts[:c.upTo+1], Celsius: truth[:c.upTo+1]}}
		if _, ok := f.peakFloorIn(4, c.level); ok {
			t.Fatalf("first %d s: quarters give a bound; the case does not test fewer readings", c.upTo)
		}
		lo, ok := f.peakFloor(c.level)
		if !ok || lo <= ts[c.upTo] || lo > cross {
			t.Errorf("first %d s: bound %.1f s (ok %v); want between %.0f s and the crossing at %.0f s", c.upTo, lo, ok, ts[c.upTo], cross)
		}
	}
	bounded, tried := 0, 0
	for seed := range uint64(40) {
		ts, cs, truth := chainFrom(rand.New(rand.NewPCG(seed, 3)), []float64{300, 40}, []float64{36, 32}, 62, 1, 400, 0.15)
		for _, upTo := range []int{20, 25, 30} {
			for _, level := range []float64{36, 40} {
				cross := ts[slices.IndexFunc(truth, func(v float64) bool { return v >= level })]
				f := &forecaster{p: &LumpedProblem{Times: ts[:upTo+1], Celsius: cs[:upTo+1]}}
				tried++
				lo, ok := f.peakFloor(level)
				if !ok {
					continue
				}
				bounded++
				if lo > cross {
					t.Errorf("seed %d, first %d s, %.0f °C: bound %.1f s after the crossing at %.0f s", seed, upTo, level, lo, cross)
				}
			}
		}
	}
	if bounded < tried*9/10 {
		t.Errorf("%d of %d noisy cutoffs bounded, want at least 90 %%", bounded, tried)
	}
	t.Logf("%d of %d noisy cutoffs bounded, none after the crossing", bounded, tried)
}
