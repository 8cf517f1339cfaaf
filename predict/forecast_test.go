package predict

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/predict/benchgen"
)

var t0 = time.Date(2026, 3, 2, 9, 0, 0, 0, time.UTC)

// secs returns t0 plus s seconds.
func secs(s float64) time.Time { return t0.Add(seconds(s)) }

// fitAndForecast fits p and forecasts targets from t0.
func fitAndForecast(t *testing.T, p LumpedProblem, targets ...Target) []TargetForecast {
	t.Helper()
	r, _ := FitLumped(p, nil)
	return ForecastLumped(&r, &p, t0, targets, nil)
}

// exactModel leaves out the model-form term: for data made by the model itself the
// parameter covariance alone must give the 90 % coverage.
var exactModel = &IntervalSettings{ModelError: -1}

// trueCrossing is τ·ln(θi/(T − Tamb)), seconds.
func trueCrossing(amb, exc, tau, level float64) float64 {
	return tau * math.Log(exc/(level-amb))
}

// Incropera 6th ed. Example 5.1 via shared/reference section 2.6: τ = 1 s, Ti = 25 °C,
// gas at 200 °C; time to reach 199 °C is τ·ln(175/1) = 5.1648 s (section 2.6, CALC
// row; the FOSSEE companion prints 5.16 s). Readings cover only the first 2 s, so the
// crossing at 5.16 s is a true forecast, made while heating toward a warmer ambient.
func TestForecastIncropera51(t *testing.T) {
	var exact, noisy LumpedProblem
	rng := rand.New(rand.NewPCG(11, 12))
	for i := 0; i <= 100; i++ {
		tt := 0.02 * float64(i)
		y := 200 - 175*math.Exp(-tt)
		exact.Times, exact.Celsius = append(exact.Times, tt), append(exact.Celsius, y)
		yn := 0.1 * math.Round((y+0.05*rng.NormFloat64())/0.1)
		noisy.Times, noisy.Celsius = append(noisy.Times, tt), append(noisy.Celsius, yn)
	}
	target := Target{Name: "199", Celsius: 199}
	got := fitAndForecast(t, exact, target)[0]
	at := got.At.Sub(t0).Seconds()
	if got.State != StatePredicted || math.Abs(at-5.1648) > 0.0005 {
		t.Errorf("exact curve: %s at %.4f s, want predicted at 5.1648 s (Incropera Ex. 5.1)", got.State, at)
	}
	got = fitAndForecast(t, noisy, target)[0]
	lo, hi := got.Earliest.Sub(t0).Seconds(), got.Latest.Sub(t0).Seconds()
	if got.State != StatePredicted || lo > 5.1648 || hi < 5.1648 {
		t.Errorf("noisy curve: %s in [%.3f, %.3f] s, want an interval around 5.1648 s (Incropera Ex. 5.1)", got.State, lo, hi)
	}
	if hi-lo > 2 {
		t.Errorf("noisy curve: interval [%.3f, %.3f] s wider than 2 s", lo, hi)
	}
}

// Our own synthetic runs: the 90 % interval must contain the true crossing in about
// 90 % of replicates (accepting 80–99 %: with 200 replicates the binomial standard
// error of a 90 % rate is 2.1 %, and the autocorrelation widening is conservative).
func TestForecastCoverage(t *testing.T) {
	reps := 200
	if testing.Short() {
		reps = 60
	}
	cases := []struct {
		name                string
		amb, exc, tau, span float64
		level, noise        float64
	}{
		{"cooling", 22, 178, 600, 600, 50, 0.2},
		{"heating", 23, -30, 300, 400, 18, 0.1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(13, 14))
			want := trueCrossing(c.amb, c.exc, c.tau, c.level)
			inside, worst := 0, 0.0
			for range reps {
				p := synth(rng, 200, c.span, c.amb, c.exc, c.tau, c.noise, 0.1)
				r, _ := FitLumped(p, nil)
				got := ForecastLumped(&r, &p, t0, []Target{{Celsius: c.level}}, exactModel)[0]
				if got.State != StatePredicted {
					t.Fatalf("state %s, want predicted", got.State)
				}
				lo, hi := got.Earliest.Sub(t0).Seconds(), got.Latest.Sub(t0).Seconds()
				if lo <= want && want <= hi {
					inside++
				}
				worst = max(worst, math.Abs(got.At.Sub(t0).Seconds()-want)/want)
			}
			rate := float64(inside) / float64(reps)
			t.Logf("coverage %.3f, worst relative error %.3f", rate, worst)
			if rate < 0.80 || rate > 0.99 {
				t.Errorf("coverage %.2f of %d, want 0.80–0.99", rate, reps)
			}
			if worst > 0.15 {
				t.Errorf("worst crossing error %.1f %% of %g s, want ≤ 15 %%", 100*worst, want)
			}
		})
	}
}

func TestForecastStates(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 16))
	// Cooling from 200 °C toward 20 °C, τ = 300 s, readings for 10 minutes: the data
	// fall to 20 + 180·e^−2 ≈ 44.4 °C.
	cool := synth(rng, 300, 600, 20, 180, 300, 0.1, 0.1)
	heat := synth(rng, 300, 600, 30, -20, 300, 0.1, 0.1)
	short := LumpedProblem{Times: []float64{0, 1, 2}, Celsius: []float64{200, 199, 198}}
	cases := []struct {
		name   string
		p      LumpedProblem
		target Target
		state  State
		at     float64 // seconds, NaN: not checked
	}{
		{"cooling reached", cool, Target{Celsius: 100}, StateReached, trueCrossing(20, 180, 300, 100)},
		{"cooling predicted", cool, Target{Celsius: 30}, StatePredicted, trueCrossing(20, 180, 300, 30)},
		{"cooling below ambient", cool, Target{Celsius: 15}, StateUnreachable, math.NaN()},
		// Never seen above 250 °C: the readings alone cannot say the specimen crossed it.
		{"cooling above start", cool, Target{Celsius: 250}, StateInsufficient, math.NaN()},
		{"heating reached", heat, Target{Celsius: 20}, StateReached, trueCrossing(30, -20, 300, 20)},
		{"heating predicted", heat, Target{Celsius: 29}, StatePredicted, trueCrossing(30, -20, 300, 29)},
		{"heating above ambient", heat, Target{Celsius: 31}, StateUnreachable, math.NaN()},
		{"within predicted", cool, Target{Celsius: math.NaN(), Within: 2}, StatePredicted, trueCrossing(20, 180, 300, 22)},
		{"within heating", heat, Target{Celsius: math.NaN(), Within: 0.5}, StatePredicted, trueCrossing(30, -20, 300, 29.5)},
		{"within reached", cool, Target{Celsius: math.NaN(), Within: 30}, StateReached, trueCrossing(20, 180, 300, 50)},
		{"within zero band", cool, Target{Celsius: math.NaN()}, StateUnreachable, math.NaN()},
		{"hold predicted", cool, Target{Celsius: 30, Hold: time.Minute}, StatePredicted, trueCrossing(20, 180, 300, 30) + 60},
		{"hold passed", cool, Target{Celsius: 100, Hold: time.Minute}, StateReached, trueCrossing(20, 180, 300, 100) + 60},
		{"holding", cool, Target{Celsius: 46, Hold: time.Hour}, StateHolding, trueCrossing(20, 180, 300, 46) + 3600},
		{"too few points", short, Target{Celsius: 50}, StateInsufficient, math.NaN()},
		{"too few but reached", short, Target{Celsius: 199.5}, StateReached, 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := fitAndForecast(t, c.p, c.target)[0]
			if got.State != c.state {
				t.Fatalf("state %s, want %s", got.State, c.state)
			}
			if math.IsNaN(c.at) {
				if !got.At.IsZero() {
					t.Errorf("At = %v, want zero", got.At)
				}
				return
			}
			// Observed times are within a reading spacing (2 s) plus noise/slope of the
			// true crossing; predicted ones within 2 %.
			at := got.At.Sub(t0).Seconds()
			if tol := max(3, 0.02*c.at); math.Abs(at-c.at) > tol {
				t.Errorf("At = %.2f s, want %.2f ± %.2f s", at, c.at, tol)
			}
			hasBounds := c.state == StatePredicted || c.state == StateHolding
			ordered := !got.Earliest.After(got.At) && !got.Latest.Before(got.At)
			if hasBounds != !got.Earliest.IsZero() || hasBounds && !ordered {
				t.Errorf("bounds [%v, %v] around %v for %s", got.Earliest, got.Latest, got.At, got.State)
			}
		})
	}
}

// TestForecastOpenEnded: a target at or just past a fitted ambient (cooling from
// 200 °C toward 20 °C, τ = 300 s, as in TestForecastStates) lies inside the ambient's
// own uncertainty, so some settling temperatures the readings allow never reach it:
// the forecast is "not before" a time after the last reading (Latest zero), neither
// "unreachable" nor "insufficient" (before the open-ended interval, "insufficient":
// no answer). A target 10 K above the ambient keeps a closed interval.
func TestForecastOpenEnded(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 16))
	p := synth(rng, 300, 600, 20, 180, 300, 0.1, 0.1)
	for _, c := range []struct {
		target float64 // °C
		open   bool
	}{{20, true}, {19.97, true}, {30, false}} {
		got := fitAndForecast(t, p, Target{Celsius: c.target})[0]
		if got.State != StatePredicted || got.Latest.IsZero() != c.open || got.Earliest.IsZero() {
			t.Errorf("%.2f °C: state %s, interval [%v, %v]: want predicted, open-ended %v", c.target, got.State, got.Earliest, got.Latest, c.open)
			continue
		}
		if lo, last := got.Earliest.Sub(t0).Seconds(), p.Times[len(p.Times)-1]; lo < last {
			t.Errorf("%.2f °C: not before %.0f s, earlier than the last reading at %.0f s", c.target, lo, last)
		}
		if !got.At.IsZero() && got.At.Before(got.Earliest) {
			t.Errorf("%.2f °C: central estimate %v before the early bound %v", c.target, got.At, got.Earliest)
		}
	}
}

// A Within target's edge is on the specimen's side of the fitted ambient.
func TestForecastWithinEdge(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 18))
	for _, c := range []struct {
		name     string
		exc      float64
		wantEdge float64
	}{{"cooling", 100, 21 + 1.5}, {"heating", -10, 21 - 1.5}} {
		p := synth(rng, 300, 600, 21, c.exc, 300, 0.05, 0)
		got := fitAndForecast(t, p, Target{Celsius: math.NaN(), Within: 1.5})[0]
		if math.Abs(got.Celsius-c.wantEdge) > 0.05 {
			t.Errorf("%s: edge %.3f °C, want %.3f", c.name, got.Celsius, c.wantEdge)
		}
	}
}

func TestInflation(t *testing.T) {
	cases := []struct{ rho, limit, want float64 }{
		{0, 5, 1},
		{-0.5, 5, 1},
		{0.6, 5, 2},  // sqrt(1.6/0.4)
		{0.8, 5, 3},  // sqrt(1.8/0.2)
		{0.99, 5, 5}, // capped
		{1, 5, 5},    // capped
		{0.5, 10, math.Sqrt(3)},
	}
	for _, c := range cases {
		if got := Inflation(c.rho, c.limit); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("Inflation(%g, %g) = %g, want %g", c.rho, c.limit, got, c.want)
		}
	}
}

// TestDirectionUnknownSaysWhy: with no measured ambient a curve whose direction is not
// known gets no late end; an oven warm-up seen for its first minute, still moving away
// from the room with its level not yet in the readings, gets at most "not before" a
// time after its last reading (speedBound), with beside it at most the dead-time fit's
// central estimate, no sooner (deadtime.go; before it, no central estimate was allowed
// here: it beat the linear trend on the heater board, realdata_test.go) — and the note says why in the terms of the case: a specimen warming
// in an unmeasured oven (still at its extreme, far from the room) is told to give the
// oven's set point, not that its readings lie near the room. Seen for 15 minutes
// (1.5 τ; at 5 and 10 minutes the level is not yet resolved well enough, at 20–30
// minutes it is, as at 15), the same warm-up has bent toward its level and is
// forecast from it (enclosureForecast):
// a central estimate within 2 % of the remaining time of the true crossing
// (600·ln(159/5) s = 2,075 s), inside its interval. Our own invented curves: an oven
// at 180 °C with τ = 600 s read every 2 s with 0.1 °C of noise, and one near a 22 °C
// room.
func TestDirectionUnknownSaysWhy(t *testing.T) {
	for _, c := range []struct {
		name          string
		from, to, tgt float64
		upTo          float64
		want          string
	}{
		{"oven warm-up, first minute", 21, 180, 175, 60, "for an oven give the specimen convection: chamber with chamber_c"},
		{"oven warm-up, bent", 21, 180, 175, 900, "have bent toward a level: taken as the temperature of an oven"},
		{"near the room", 24, 22.5, 23, 300, "The readings lie within a few degrees of an unmeasured room"},
	} {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(61, 62))
			var ts, cs []float64
			for s := 0.0; s <= c.upTo; s += 2 {
				ts = append(ts, s)
				cs = append(cs, c.to+(c.from-c.to)*math.Exp(-s/600)+0.1*rng.NormFloat64())
			}
			p, onset, _ := Prepare(ts, cs, nil)
			f := Analyze(p, time.Unix(0, 0).Add(seconds(onset)), []Target{{Name: "t", Celsius: c.tgt}}, AnalyzeOptions{})
			tf := f.Targets[0]
			last := time.Unix(0, 0).Add(seconds(onset + p.Times[len(p.Times)-1]))
			notBefore := tf.State == StatePredicted && (tf.At.IsZero() || !tf.At.Before(tf.Earliest)) && tf.Latest.IsZero() && tf.Earliest.After(last)
			if strings.HasSuffix(c.name, "bent") {
				truth := time.Unix(0, 0).Add(seconds(600 * math.Log((c.to-c.from)/(c.to-c.tgt))))
				if tf.State != StatePredicted || tf.At.IsZero() || tf.Latest.IsZero() ||
					math.Abs(tf.At.Sub(truth).Seconds()) > 0.02*truth.Sub(last).Seconds() || tf.Earliest.After(truth) || tf.Latest.Before(truth) {
					t.Errorf("%s at %v [%v, %v], want a central estimate within 2 %% of the remaining time of %v, inside its interval", tf.State, tf.At, tf.Earliest, tf.Latest, truth)
				}
			} else if tf.State != StateInsufficient && !notBefore {
				t.Errorf("%s at %v [%v, %v], want insufficient or not-before a time after %v (with a central estimate no sooner, if any)", tf.State, tf.At, tf.Earliest, tf.Latest, last)
			}
			if !slices.ContainsFunc(f.Notes, func(n string) bool { return strings.Contains(n, c.want) }) {
				t.Errorf("notes %q, want one with %q", f.Notes, c.want)
			}
		})
	}
}

// lumpedWarmUp simulates a lumped body of time constant tau (s) starting at t0c in air
// whose temperature air(t) it follows (dT/dt = (air − T)/tau, small Euler steps), read
// every dt seconds until end with Gaussian noise of sd °C.
func lumpedWarmUp(rng *rand.Rand, air func(float64) float64, t0c, tau, dt, end, sd float64) (ts, cs, truth []float64) {
	const h = 0.05
	temp, next := t0c, 0.0
	for s := 0.0; s <= end; s += h {
		if s >= next {
			ts, truth = append(ts, s), append(truth, temp)
			cs = append(cs, temp+sd*rng.NormFloat64())
			next += dt
		}
		temp += h * (air(s) - temp) / tau
	}
	return ts, cs, truth
}

// TestSpeedBoundNeverLate: with no ambient measured, a "not before" bound is never
// after the true crossing — swept over cutoffs every 40 s. Specimens warming in an
// oven whose air is not measured get "not before" a time for a target ahead of the
// readings (never for a handling target; with at most the dead-time fit's central
// estimate beside it, no sooner, where peakBound gives the bound: deadtime.go) until the readings have bent toward a level
// they resolve; from then on a central estimate and a closed interval
// (enclosureForecast), which must hold the crossing at 85 % of the cutoffs or more
// where the air stays as it is until the crossing (measured: 27 of 28 with the
// whole-degree logger — the last cutoff, 35 s before the crossing, misses it by 1 s —,
// 6 of 6 a reading a minute; with the door, closed intervals come only before it
// opens, not judged: 16 of 19 hold the crossing the door delays, the 3 just before
// it do not, which no forecast from the readings can see; none after it),
// through a door opened for two minutes (the air drops by 60 K; the recovery after it
// is the fastest the readings ever move again) and through an oven still ramping to its
// set point when the specimen went in. A hot specimen cooling in a room, with a door
// letting in air 5 K colder for three minutes (it then cools faster than its readings
// said), gets open-ended answers for a target 4 K above the room (some settling
// temperatures the readings allow never reach it), whose early bound the readings'
// own speed may raise (speedFloor). A two-stage oven program (150 °C, then 200 °C from
// 2,400 s) with a target between the stages: the first stage's readings settle short
// of it, so no bound may be given from them. And the bound's enemies in the readings
// themselves: a logger that rounds to whole degrees (targets between its steps, so the
// last reading's rounding matters), and one reading a minute with 0.3 °C of noise.
// Our own invented records: 180 °C oven or 22 °C room, read every 5 s, 0.1 °C noise,
// unless the case says otherwise. Swept once over 30 noise seeds (not kept: 80 s): no
// bound after the truth in any case; before the bound required the readings' own
// trend to reach the target, the two-stage oven had late bounds in all 30.
func TestSpeedBoundNeverLate(t *testing.T) {
	for _, c := range []struct {
		name          string
		from, target  float64 // °C
		tau           float64
		minOpen       int // cutoffs that must get a not-before (the rules still apply)
		air           func(float64) float64
		dt, sd, quant float64 // reading spacing s, noise °C, rounding step °C (0: 5 s, 0.1 °C, none)
	}{
		{"oven, door at 900 s", 21, 175, 600, 10, func(s float64) float64 {
			if s >= 900 && s < 1020 {
				return 120
			}
			return 180
		}, 0, 0, 0},
		// While the air ramps the readings speed up, so no quarter-by-quarter slowing is
		// seen before the crossing: no answer, which is right.
		{"oven ramping for 15 min", 21, 175, 300, 0, func(s float64) float64 { return min(21+159*s/900, 180) }, 0, 0, 0},
		{"cooling, door at 2000 s", 200, 26, 900, 3, func(s float64) float64 {
			if s >= 2000 && s < 2180 {
				return 17
			}
			return 22
		}, 0, 0, 0},
		{"two-stage oven, target between the stages", 21, 175, 600, 0, func(s float64) float64 {
			if s < 2400 {
				return 150
			}
			return 200
		}, 0, 0, 0},
		{"oven, whole-degree logger, target between steps", 21, 170.5, 600, 3, func(float64) float64 { return 180 }, 5, 0.1, 1},
		{"oven, a reading a minute, 0.3 °C noise", 21, 170, 600, 0, func(float64) float64 { return 180 }, 60, 0.3, 0},
	} {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(51, 52))
			dt, sd := cmp.Or(c.dt, 5), cmp.Or(c.sd, 0.1)
			ts, cs, truth := lumpedWarmUp(rng, c.air, c.from, c.tau, dt, 6000, sd)
			if c.quant > 0 {
				for i := range cs {
					cs[i] = c.quant * math.Round(cs[i]/c.quant)
				}
			}
			side := sign(c.from - c.target)
			cross := ts[slices.IndexFunc(truth, func(v float64) bool { return side*(v-c.target) <= 0 })]
			step := cutoffStep()
			open, closed, closedCovered := 0, 0, 0
			sweepCutoffs(ts, cs, cross, c.target, func(upTo float64, f *Forecast) {
				if h := f.Targets[1]; side < 0 && h.State != StateInsufficient {
					t.Fatalf("%.0f s: handling target %s on a warming specimen", upTo, h.State)
				}
				tf := f.Targets[0]
				if side < 0 && tf.State != StateInsufficient && tf.State != StatePredicted {
					t.Fatalf("%.0f s: %s at %v; want insufficient or predicted", upTo, tf.State, tf.At)
				}
				if side < 0 && tf.State == StatePredicted && tf.Latest.IsZero() && !tf.At.IsZero() && tf.At.Before(tf.Earliest) {
					t.Fatalf("%.0f s: central estimate %v sooner than its not-before %v", upTo, tf.At, tf.Earliest)
				}
				if side < 0 && tf.State == StatePredicted && !tf.Latest.IsZero() && steadyAir(c.air, upTo, cross) {
					closed++
					if lo, hi := tf.Earliest.Sub(t0).Seconds(), tf.Latest.Sub(t0).Seconds(); lo <= cross && cross <= hi {
						closedCovered++
					}
				}
				for _, tf := range f.Targets {
					if tf.State != StatePredicted || !tf.Latest.IsZero() {
						continue
					}
					if tf.Target.Name == "t" {
						open++
					}
					if lo := tf.Earliest.Sub(t0).Seconds(); lo > cross {
						t.Errorf("%.0f s: %s not before %.0f s, after the true crossing at %.0f s", upTo, tf.Target.Name, lo, cross)
					}
				}
			})
			want := c.minOpen
			if want > 0 {
				want = max(1, want*40/int(step)) // fewer cutoffs under -race
			}
			if open < want {
				t.Errorf("only %d of the cutoffs got a not-before: the rules no longer apply here", open)
			}
			t.Logf("%d cutoffs answered with not-before, none after the crossing at %.0f s; %d of %d closed intervals with the air steady to the crossing hold it", open, cross, closedCovered, closed)
			if closed > 0 && float64(closedCovered) < 0.85*float64(closed) {
				t.Errorf("closed intervals hold the crossing at %d of %d cutoffs, floor 85 %%", closedCovered, closed)
			}
		})
	}
}

// steadyAir reports whether air stays as it is at from through to: a forecast assumes
// the surroundings stay as they are, so a closed interval before a door opens is not
// judged on the crossing the door delays.
func steadyAir(air func(float64) float64, from, to float64) bool {
	for s := from; s <= to; s += 5 {
		if air(s) != air(from) {
			return false
		}
	}
	return true
}

// TestSpeedFloorFromTheLine: the speed bound measures the way left from the last
// quarter's line, not from the last reading, so one reading knocked away from the target
// (noise, a logger's rounding) cannot push the bound later; on an exact exponential the
// bound lies before the true crossing, and the quantile for a quarter of 5 readings is
// Student's t with 3 degrees of freedom at 97.7 % one-sided, which lies between the
// tabled t(0.975, 3) = 3.182 and t(0.99, 3) = 4.541 (any table of Student's t, e.g. the
// NIST/SEMATECH e-Handbook's; from memory), against 2.00 for a large sample (the
// normal's 97.725 % point).
func TestSpeedFloorFromTheLine(t *testing.T) {
	const amb, from, tau, level = 180.0, 21.0, 600.0, 170.0
	var ts, cs []float64
	for s := 0.0; s <= 1200; s += 10 {
		ts, cs = append(ts, s), append(cs, amb+(from-amb)*math.Exp(-s/tau))
	}
	cross := -tau * math.Log((amb-level)/(amb-from))
	f := &forecaster{p: &LumpedProblem{Times: ts, Celsius: cs}}
	clean, ok := f.speedFloor(level)
	if !ok || clean >= cross || clean <= ts[len(ts)-1] {
		t.Fatalf("exact exponential: bound %.0f s (ok %v); want between the last reading %.0f s and the crossing %.0f s", clean, ok, ts[len(ts)-1], cross)
	}
	knocked := slices.Clone(cs)
	knocked[len(knocked)-1] -= 3 // 3 °C away from the target
	f.p = &LumpedProblem{Times: ts, Celsius: knocked}
	moved, ok := f.speedFloor(level)
	if !ok || moved-clean > 0.1*(clean-ts[len(ts)-1]) {
		t.Errorf("last reading 3 °C off: bound %.0f s against %.0f s clean (ok %v); the last reading moved it by more than a tenth of the way", moved, clean, ok)
	}
	if q := speedQuantile(3); q <= 3.182 || q >= 4.541 {
		t.Errorf("speedQuantile(3) = %.3f, want between t(0.975, 3) = 3.182 and t(0.99, 3) = 4.541", q)
	}
	if q := speedQuantile(10000); math.Abs(q-2.0) > 0.01 {
		t.Errorf("speedQuantile(10000) = %.3f, want about 2.00", q)
	}
}

// TestOpenEndedEarlyBoundNotNow: a target within the uncertainty of the fitted settling
// temperature gets an open-ended interval; when the closed interval's early end would
// be the last reading itself ("not before now", which says nothing), the profile's
// bound (notBefore: the exponential through the readings held at the farthest settling
// temperature they allow) stands in for it when it lies after the last reading. Our own
// invented record: a lumped body at 133.5 °C cooling toward a 19 °C room with τ =
// 15,000 s, read every 50 s with 0.3 °C of noise, seen for 1,950 s (about 10 % of the
// way to 50 °C; the benchmark's run01 at 10 % elapsed is such a case). The truth is
// 19 + 114.5·exp(−t/τ) = 50 at t = τ·ln(114.5/31) ≈ 19,600 s. Before the change every
// seed answered "not before now"; the bound must lie after the last reading and before
// the truth, with no late end, for the handling target too (Due stays zero: nothing
// is planned from an open-ended answer).
func TestOpenEndedEarlyBoundNotNow(t *testing.T) {
	const room, from, tau, level = 19.0, 133.5, 15000.0, 50.0
	cross := tau * math.Log((from-room)/(level-room))
	var open int
	for seed := uint64(1); seed <= 6; seed++ {
		rng := rand.New(rand.NewPCG(seed, 7))
		ts, cs, _ := lumpedWarmUp(rng, func(float64) float64 { return room }, from, tau, 50, 1950, 0.3)
		p, onset, _ := Prepare(ts, cs, nil)
		f := Analyze(p, t0.Add(seconds(onset)), []Target{{Name: "t", Celsius: level}, {Name: "handle", Celsius: level, Handling: true}}, AnalyzeOptions{})
		last := onset + p.Times[len(p.Times)-1]
		for _, tf := range f.Targets {
			lo := tf.Earliest.Sub(t0).Seconds()
			// Seed 4 since the h(T) fit's retry from the room prior (retryFromPrior):
			// the h(T) optimum there fits the readings a little worse (rms 0.225 against
			// 0.218 K), the constant-h exponential wins by AIC, and its 83 °C level
			// leaves the target insufficient: it says nothing, which is not "not before
			// now" either. Counted, and at most one seed may.
			if tf.State == StateInsufficient && tf.Earliest.IsZero() {
				continue
			}
			open++
			if tf.State != StatePredicted || !tf.Latest.IsZero() || !tf.Due().IsZero() && tf.Target.Handling {
				t.Errorf("seed %d, %s: %s [%v, %v], want an open-ended interval", seed, tf.Target.Name, tf.State, tf.Earliest, tf.Latest)
				continue
			}
			if lo <= last+1 || lo >= cross {
				t.Errorf("seed %d, %s: not before %.0f s; want after the last reading %.0f s and before the true crossing %.0f s", seed, tf.Target.Name, lo, last, cross)
			}
		}
	}
	if open < 10 {
		t.Errorf("%d of 12 forecasts (6 seeds, 2 targets) answered; want at least 10", open)
	}
}

// TestOpenEndedBoundNotLate: a target inside the uncertainty of a fitted settling
// temperature that is itself wrong. The generated benchmark's run50 (predict/benchgen:
// a steel sphere warming from −7 °C in a 23 °C room, read every second as in
// TestAccuracyDense, its description given) at 50 % of the time to 22 °C: the h(T) fit
// settles at 22.08 ± 0.02 °C, so the target lies within u = 0.10 K of it and the
// interval is open-ended. The profile held only u beyond the fitted temperature
// answered "not before 10,364 s" for the generator's crossing at 10,155 s; reaching to
// the room prior's far end, as for every other open answer, it must lie before it.
func TestOpenEndedBoundNotLate(t *testing.T) {
	var c benchgen.Case
	for _, k := range benchgen.Cases() {
		if k.File == "run50.csv" {
			c = k
		}
	}
	c, text := benchgen.RunEvery(c, 3200, 1)
	curve, err := ReadCurveCSV(strings.NewReader(text), c.File)
	if err != nil {
		t.Fatal(err)
	}
	sp, err := caseSpecimen(c)
	if err != nil {
		t.Fatal(err)
	}
	part := curve.Until(c.PlacedS + 0.5*(c.CrossingS-c.PlacedS))
	p, onset, _ := Prepare(part.Times, part.Celsius, part.FilledAmbient())
	f := Analyze(p, t0.Add(seconds(onset)), []Target{{Name: "t", Celsius: c.Target}}, AnalyzeOptions{Specimen: sp})
	tf := f.Targets[0]
	if tf.State != StatePredicted || !tf.Latest.IsZero() {
		t.Fatalf("%s [%v, %v], want an open-ended interval (the case this test holds)", tf.State, tf.Earliest, tf.Latest)
	}
	last := t0.Add(seconds(part.Times[len(part.Times)-1]))
	if lo := tf.Earliest.Sub(t0).Seconds(); lo > c.CrossingS || !tf.Earliest.After(last) {
		t.Errorf("not before %.0f s, want after the last reading %v and at or before the true crossing %.0f s", lo, last.Sub(t0), c.CrossingS)
	}
}

// laggedWarmUp is lumpedWarmUp read at a sensor inside the specimen: the surface
// follows the air with time constant tau, the sensor follows the surface with time
// constant lag (two first-order stages in series), so the readings first speed up and
// then slow — the S-shaped curve of a thermocouple at a specimen's centre.
func laggedWarmUp(rng *rand.Rand, air func(float64) float64, t0c, tau, lag, dt, end, sd float64) (ts, cs, truth []float64) {
	const h = 0.05
	surf, core, next := t0c, t0c, 0.0
	for s := 0.0; s <= end; s += h {
		if s >= next {
			ts, truth = append(ts, s), append(truth, core)
			cs = append(cs, core+sd*rng.NormFloat64())
			next += dt
		}
		surf += h * (air(s) - surf) / tau
		core += h * (surf - core) / lag
	}
	return ts, cs, truth
}

// TestSpeedBoundThroughCoreLag: a specimen warming in an unmeasured oven, read at a
// sensor that lags its surface, gets "not before" bounds once its readings slow past
// the lag's inflection (and before, from their speed after the step: peakBound, with
// the dead-time fit's central estimate beside it, no sooner, and never a late end;
// before deadtime.go no central estimate was allowed here), and none after the true
// crossing — swept over cutoffs every
// 40 s. Before the first quarter's lag was let off (speedFloor asked all four quarters
// to slow), the 300 s lag got none at all: its first quarter is always the speeding-up
// one. Our own invented records: a 180 °C oven, τ = 600 s, the sensor 300 s behind
// the surface, read every 5 s with 0.1 °C of noise, target 175 °C; once plain and once
// with the door opened for two minutes at 900 s (the air drops to 120 °C). Swept once
// over 10 noise seeds (not kept): no bound after the truth. And a two-stage oven (150
// °C, then 200 °C from 2,400 s; target 175 °C between the stages) read through the same
// lag: before speedFloor compared the last quarter's two halves it had one bound after
// the truth, at 2,700 s, in each of the 10 seeds (with or without the lag let off).
func TestSpeedBoundThroughCoreLag(t *testing.T) {
	for _, c := range []struct {
		name    string
		minOpen int
		air     func(float64) float64
	}{
		{"oven, sensor lags 300 s", 20, func(float64) float64 { return 180 }},
		{"oven, sensor lags 300 s, door at 900 s", 20, func(s float64) float64 {
			if s >= 900 && s < 1020 {
				return 120
			}
			return 180
		}},
		// The second stage starts at 2,400 s; at 2,700 s the sensor has only begun to
		// speed up again, and the last quarter as a whole is still slower than the one
		// before: only its last half, faster than the half before it, shows the step.
		{"two-stage oven (150 °C, then 200 °C from 2,400 s), sensor lags 300 s", 0, func(s float64) float64 {
			if s < 2400 {
				return 150
			}
			return 200
		}},
	} {
		t.Run(c.name, func(t *testing.T) {
			const target = 175.0
			rng := rand.New(rand.NewPCG(51, 52))
			ts, cs, truth := laggedWarmUp(rng, c.air, 21, 600, 300, 5, 6000, 0.1)
			cross := ts[slices.IndexFunc(truth, func(v float64) bool { return v >= target })]
			step := cutoffStep()
			open := 0
			sweepCutoffs(ts, cs, cross, target, func(upTo float64, f *Forecast) {
				if h := f.Targets[1]; h.State != StateInsufficient {
					t.Fatalf("%.0f s: handling target %s on a warming specimen", upTo, h.State)
				}
				tf := f.Targets[0]
				if tf.State == StateInsufficient {
					return
				}
				if tf.State != StatePredicted || !tf.At.IsZero() && tf.At.Before(tf.Earliest) || !tf.Latest.IsZero() {
					t.Fatalf("%.0f s: %s at %v [%v, %v]; want insufficient or a not-before (a central estimate no sooner)", upTo, tf.State, tf.At, tf.Earliest, tf.Latest)
				}
				open++
				if lo := tf.Earliest.Sub(t0).Seconds(); lo > cross {
					t.Errorf("%.0f s: not before %.0f s, after the true crossing at %.0f s", upTo, lo, cross)
				}
			})
			want := c.minOpen * 40 / int(step)
			if c.minOpen > 0 {
				want = max(1, want)
			}
			if open < want {
				t.Errorf("only %d of the cutoffs got a not-before, want at least %d", open, want)
			}
			t.Logf("%d cutoffs answered with not-before, none after the crossing at %.0f s", open, cross)
		})
	}
}

// cutoffStep is the spacing, in seconds, of the cutoffs the "not before" sweeps fit at:
// four times wider under -race, which is that much slower.
func cutoffStep() float64 {
	if raceEnabled {
		return 160
	}
	return 40
}

// sweepCutoffs analyses the readings up to every cutoffStep from 100 s until cross,
// with level as a plain target ("t") and as a handling limit ("handle"), and hands each
// cutoff's forecast to check.
func sweepCutoffs(ts, cs []float64, cross, level float64, check func(upTo float64, f *Forecast)) {
	for upTo := 100.0; upTo < cross; upTo += cutoffStep() {
		n := slices.IndexFunc(ts, func(s float64) bool { return s > upTo })
		p, onset, _ := Prepare(ts[:n], cs[:n], nil)
		check(upTo, Analyze(p, t0.Add(seconds(onset)), []Target{{Name: "t", Celsius: level}, {Name: "handle", Celsius: level, Handling: true}}, AnalyzeOptions{}))
	}
}

// TestSparseRecordNotBefore: a record of only 4–7 readings, fewer than a free fit
// needs, still gets a "not before" from the profile (profileMinPoints): the
// exponential through the readings held at the room prior's far end, with Student's t
// on the few degrees of freedom. Our own invented record: a part at 322 °C cooling
// toward a 22 °C room with τ = 1,200 s, read once a minute to 0.1 °C; the target,
// 100 °C, is crossed at 1,200·ln(300/78) = 1,616 s. Before profileMinPoints the
// profile's refit needed 8 readings and the answer was insufficient. With 4 readings it
// still is: Student's t at two degrees of freedom (2.92) puts the bound before the last
// reading, and "not before now" says nothing.
func TestSparseRecordNotBefore(t *testing.T) {
	const room, exc, tau, level = 22.0, 300.0, 1200.0, 100.0
	cross := tau * math.Log(exc/(level-room))
	for n := 4; n <= 7; n++ {
		var ts, cs []float64
		for i := range n {
			s := 60 * float64(i)
			ts, cs = append(ts, s), append(cs, math.Round(10*(room+exc*math.Exp(-s/tau)))/10)
		}
		p, onset, _ := Prepare(ts, cs, nil)
		f := Analyze(p, t0.Add(seconds(onset)), []Target{{Name: "t", Celsius: level}, {Name: "handle", Celsius: level, Handling: true}}, AnalyzeOptions{})
		for _, tf := range f.Targets {
			lo := tf.Earliest.Sub(t0).Seconds()
			if n == 4 {
				if tf.State != StateInsufficient {
					t.Errorf("4 readings, %s: %s, want insufficient", tf.Target.Name, tf.State)
				}
				continue
			}
			if tf.State != StatePredicted || !tf.Latest.IsZero() || lo <= ts[n-1] || lo > cross {
				t.Errorf("%d readings, %s: %s [%v, %v]; want not before a time after the last reading (%.0f s) and no later than the crossing (%.0f s), no late end",
					n, tf.Target.Name, tf.State, tf.Earliest.Sub(t0), tf.Latest, ts[n-1], cross)
			}
			if tf.Target.Handling && !tf.Due().IsZero() {
				t.Errorf("%d readings, handling: due %v, want none (an open-ended answer plans no handling)", n, tf.Due())
			}
		}
	}
}

// TestAmbientOffsetWidens: with a measured ambient the interval carries the ambient's
// offset from where the specimen settles (IntervalSettings.AmbientOffset) as a level
// error through the slope at the crossing, and nothing else moves. Our own noiseless
// lumped cool-down, 3 K above a measured 20 °C room, τ = 1,800 s, read every 10 s for
// 900 s; the target 20.5 °C, where the curve falls 0.5/1,800 K/s, so an offset of
// 0.1 K is 360 s of the crossing (the delta method, common practice): the squared
// half-widths differ by (1.645·360 s)². A fitted ambient carries its own uncertainty
// instead, and the setting leaves it alone.
func TestAmbientOffsetWidens(t *testing.T) {
	const amb, exc, tau, level = 20.0, 3.0, 1800.0, 20.5
	var p LumpedProblem
	for s := 0.0; s <= 900; s += 10 {
		p.Times = append(p.Times, s)
		p.Celsius = append(p.Celsius, amb+exc*math.Exp(-s/tau)+1e-4*math.Sin(s))
		p.Ambient = append(p.Ambient, amb)
	}
	r, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	half := func(p LumpedProblem, r *LumpedResult, offset float64) (at, h float64) {
		s := &IntervalSettings{Z: 1.645, ModelError: -1, AmbientOffset: offset}
		tf := ForecastLumped(r, &p, t0, []Target{{Celsius: level}}, s)[0]
		if tf.State != StatePredicted || tf.Latest.IsZero() {
			t.Fatalf("offset %g: %s [%v, %v], want a closed interval", offset, tf.State, tf.Earliest, tf.Latest)
		}
		return tf.At.Sub(t0).Seconds(), tf.Latest.Sub(tf.At).Seconds()
	}
	at0, h0 := half(p, &r, -1)
	at1, h1 := half(p, &r, 0.1)
	want := 1.645 * 0.1 / (level - amb) * tau
	if got := math.Sqrt(h1*h1 - h0*h0); math.Abs(got-want) > 0.01*want || at0 != at1 {
		t.Errorf("offset 0.1 K: half-width %.1f s against %.1f s without, the offset's share %.1f s (want %.1f s); central estimate %.1f and %.1f s (want equal)", h1, h0, got, want, at1, at0)
	}
	if _, hd := half(p, &r, 0); hd <= h0 {
		t.Errorf("default offset: half-width %.1f s, want wider than %.1f s without", hd, h0)
	}
	free := LumpedProblem{Times: p.Times, Celsius: p.Celsius}
	rf, err := FitLumped(free, nil)
	if err != nil {
		t.Fatal(err)
	}
	_, a := half(free, &rf, -1)
	if _, b := half(free, &rf, 0.1); a != b {
		t.Errorf("fitted ambient: half-width %.1f s with the offset setting, %.1f s without; want equal", b, a)
	}
}
