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
	const h = 0.02
	x := make([]float64, len(taus))
	for i := range x {
		x[i] = from
	}
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
// time after its last reading for a target ahead of it once its speed has stopped
// rising, never after the true crossing, never a central estimate or a late end, and
// never for a handling target. Swept over cutoffs every 5 s from 20 s. Without
// peakBound every one of these cutoffs is insufficient (no model resolves a level,
// and the readings do not slow quarter by quarter). Our own invented chains:
// heater and sink (300 s and 40 s), and heater, sink and sensor (400, 60 and 15 s),
// from a 22 °C room toward 62 °C, read every second with 0.05 °C of noise; targets
// near the room (direction unknown) and far from it (still at their extreme).
func TestPeakBoundNeverLate(t *testing.T) {
	for _, c := range []struct {
		name    string
		taus    []float64
		target  float64
		minOpen int
	}{
		{"heater and sink, near the room", []float64{300, 40}, 29, 3},
		{"heater and sink, far from the room", []float64{300, 40}, 45, 10},
		{"three lags, far from the room", []float64{400, 60, 15}, 42, 8},
	} {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(7, 8))
			ts, cs, truth := chainStep(rng, c.taus, 22, 62, 1, 1500, 0.05)
			cross := ts[slices.IndexFunc(truth, func(v float64) bool { return v >= c.target })]
			open := 0
			for upTo := 20.0; upTo < cross; upTo += 5 {
				n := slices.IndexFunc(ts, func(s float64) bool { return s > upTo })
				p, onset, _ := Prepare(ts[:n], cs[:n], nil)
				f := Analyze(p, t0.Add(seconds(onset)), []Target{{Name: "t", Celsius: c.target}, {Name: "handle", Celsius: c.target, Handling: true}}, AnalyzeOptions{})
				if h := f.Targets[1]; h.State != StateInsufficient {
					t.Fatalf("%.0f s: handling target %s on a warming part", upTo, h.State)
				}
				tf := f.Targets[0]
				if tf.State == StateInsufficient {
					continue
				}
				if tf.State != StatePredicted || !tf.At.IsZero() || !tf.Latest.IsZero() {
					t.Fatalf("%.0f s: %s at %v [%v, %v]; want insufficient or only a not-before", upTo, tf.State, tf.At, tf.Earliest, tf.Latest)
				}
				open++
				lo := tf.Earliest.Sub(t0).Seconds()
				if lo > cross {
					t.Errorf("%.0f s: not before %.0f s, after the true crossing at %.0f s", upTo, lo, cross)
				}
				if lo <= ts[n-1] {
					t.Errorf("%.0f s: not before %.0f s, not after the last reading", upTo, lo)
				}
			}
			if open < c.minOpen {
				t.Errorf("only %d cutoffs got a not-before, want at least %d", open, c.minOpen)
			}
			t.Logf("%d cutoffs answered with not-before, none after the crossing at %.0f s", open, cross)
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
