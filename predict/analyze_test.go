package predict

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/predict/benchgen"
	"github.com/settle-lab/settle/predict/surface"
)

// noisy adds Gaussian noise σ and 0.1 °C quantisation to a copy of c.
func noisy(rng *rand.Rand, c []float64, sigma float64) []float64 {
	out := make([]float64, len(c))
	for i, v := range c {
		out[i] = 0.1 * math.Round((v+sigma*rng.NormFloat64())/0.1)
	}
	return out
}

// Model choice: data made by the constant-h exponential keep the lumped model; data
// made by the h(T) ODE (a hot steel bar in still air) choose lumped-h(T). Both say why.
func TestAnalyzeModelChoice(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	exp := synth(rng, 600, 3600, 22, 300, 900, 0.1, 0.1)
	law := SurfaceLaw{Geometry: surface.HorizontalCylinder, LengthM: 0.04, Emissivity: 0.8}
	h := simulateH(law, 7850*434*0.01, 22, 700, 5, 3000)
	h.Celsius = noisy(rng, h.Celsius, 0.1)
	for _, c := range []struct {
		name, model string
		p           LumpedProblem
	}{{"exponential data", ModelLumped, exp}, {"h(T) data", ModelLumpedH, h}} {
		f := Analyze(c.p, t0, nil, AnalyzeOptions{})
		notes := strings.Join(f.Notes, " ")
		if f.Model != c.model || !strings.Contains(notes, "Model: ") || !strings.Contains(notes, "AIC") {
			t.Errorf("%s: model %s, notes %q; want %s with the reason", c.name, f.Model, f.Notes, c.model)
		}
	}
}

// Hot specimen, known: the fit of a 700 °C steel bar reports the h scale near 1 (the
// data were made with the specimen's own law) and a Biot number h·Lc/k; a thick brick
// is out of the lumped range and says so.
func TestAnalyzeSpecimenBiot(t *testing.T) {
	rng := rand.New(rand.NewPCG(33, 34))
	bar := Specimen{Shape: "cylinder", SizeM: 0.02, Sensor: "center",
		Material: SpecimenMaterial{Density: 7850, SpecificHeat: 434, Conductivity: 60.5, Emissivity: 0.8}}
	p := simulateH(bar.law(), bar.HeatCapacityPerArea(), 22, 700, 5, 3000)
	p.Celsius = noisy(rng, p.Celsius, 0.1)
	f := Analyze(p, t0, nil, AnalyzeOptions{Specimen: &bar})
	var scale float64
	for _, q := range f.Params {
		if q.Name == "h_scale" {
			scale = q.Value
		}
	}
	h0 := bar.law().H(700, 22)
	if f.Model != ModelLumpedH || math.Abs(scale-1) > 0.02 || math.Abs(f.Biot-h0*0.01/60.5) > 0.05*f.Biot || f.OutOfRange {
		t.Errorf("model %s, scale %g, Bi %g (want %g), out of range %v", f.Model, scale, f.Biot, h0*0.01/60.5, f.OutOfRange)
	}
	brick := bar
	brick.Material.Conductivity = 0.72
	brick.SizeM = 0.05
	// Issue 4: at Bi ≥ 0.1 the engine moves to a conduction model, which is valid there.
	f = Analyze(p, t0, nil, AnalyzeOptions{Specimen: &brick})
	if !strings.HasPrefix(f.Model, "conduction-") || f.OutOfRange || f.Biot < 0.1 ||
		!strings.Contains(strings.Join(f.Notes, " "), "replaces the lumped model") {
		t.Errorf("brick: model %s, Bi %g, out of range %v, notes %q", f.Model, f.Biot, f.OutOfRange, f.Notes)
	}
}

// A cold specimen put in a 23 °C conditioning room warms the same way a hot one
// cools: the forecast of reaching 22 °C is close to the true crossing and its
// interval holds it.
func TestAnalyzeHeatingTowardWarmAmbient(t *testing.T) {
	rng := rand.New(rand.NewPCG(35, 36))
	law := SurfaceLaw{Geometry: surface.VerticalPlate, LengthM: 0.2, Emissivity: 0.9}
	c := 2300 * 880 * 0.02
	full := simulateH(law, c, 23, -20, 10, 40000)
	var cross float64
	for i, v := range full.Celsius {
		if v >= 22 {
			cross = full.Times[i]
			break
		}
	}
	n := 0
	for n < len(full.Times) && full.Times[n] <= cross/3 {
		n++
	}
	p := LumpedProblem{Times: full.Times[:n], Celsius: noisy(rng, full.Celsius[:n], 0.05)}
	f := Analyze(p, t0, []Target{{Name: "test", Celsius: 22}}, AnalyzeOptions{})
	tg := f.Targets[0]
	at := tg.At.Sub(t0).Seconds()
	if tg.State != StatePredicted || math.Abs(at-cross) > 0.1*(cross-p.Times[n-1]) ||
		tg.Earliest.Sub(t0).Seconds() > cross || tg.Latest.Sub(t0).Seconds() < cross {
		t.Errorf("%s at %.0f s [%v, %v], true %.0f s", tg.State, at, tg.Earliest.Sub(t0), tg.Latest.Sub(t0), cross)
	}
}

// Faults a logger really produces must neither crash a fit nor bend it: spikes,
// dropouts (NaN), a pre-roll at room temperature before the specimen is placed. The
// forecast with faults agrees with the clean one.
func TestAnalyzeRobustToFaults(t *testing.T) {
	rng := rand.New(rand.NewPCG(37, 38))
	clean := synth(rng, 200, 900, 21, 280, 700, 0.1, 0.1)
	var ts, cs []float64
	for i := 0; i < 12; i++ { // two minutes at room temperature
		ts, cs = append(ts, float64(i*10)), append(cs, 21.0)
	}
	for i, tt := range clean.Times {
		c := clean.Celsius[i]
		switch {
		case i%37 == 5:
			c += 80 // a spike
		case i%23 == 7:
			c = math.NaN() // a dropout
		}
		ts, cs = append(ts, tt+120), append(cs, c)
	}
	target := []Target{{Name: "handle", Celsius: 50}}
	want := Analyze(clean, t0, target, AnalyzeOptions{}).Targets[0].At.Sub(t0).Seconds() + 120
	p, onset, dropped := Prepare(ts, cs, nil)
	if onset != 120 || dropped < 10 {
		t.Errorf("onset %g s, %d dropped; want 120 s and the spikes and dropouts", onset, dropped)
	}
	f := Analyze(p, t0.Add(seconds(onset)), target, AnalyzeOptions{})
	got := f.Targets[0].At.Sub(t0).Seconds()
	if f.Targets[0].State != StatePredicted || math.Abs(got-want) > 0.01*want {
		t.Errorf("with faults: %s at %.1f s, clean %.1f s", f.Targets[0].State, got, want)
	}
}

// A slowly drifting measured ambient (+1 K/h) is followed, not fitted as curvature.
// The readings are the lumped body's exact response, dT/dt = −(T − Ta(t))/τ with
// Ta = 20 °C + r·t: T = Ta(t) − r·τ + (θ0 + r·τ)·exp(−t/τ) (a first-order system's
// ramp response, worked out here): the body lags the ramp by r·τ, 0.17 K at the end.
// Until issue 12 the curve here was Ta(t) + θ0·exp(−t/τ), the air followed at once,
// which is what the engine then assumed (lagAmbient).
func TestAnalyzeDriftingAmbient(t *testing.T) {
	rng := rand.New(rand.NewPCG(39, 40))
	p := LumpedProblem{}
	const tau, r = 600.0, 1.0 / 3600
	for s := 0.0; s <= 1800; s += 5 {
		amb := 20 + r*s
		p.Times = append(p.Times, s)
		p.Celsius = append(p.Celsius, amb-r*tau+(150+r*tau)*math.Exp(-s/tau))
		p.Ambient = append(p.Ambient, amb)
	}
	p.Celsius = noisy(rng, p.Celsius, 0.05)
	// Since moving air's radiation share is fitted (refineMovingShare), a moving-air
	// law with a coefficient of about 740 W/(m²·K) beside emissivity 0.4 — h within
	// 0.5 % of constant over the curve — beats the exponential (rms 0.0552 against
	// 0.0568 K: the 300 s smoothing of the measured ramp leaves 0.03 K of structure);
	// its time constant is the same, and that is what the drift must not bend. The
	// test asked for the lumped model before; it now allows that law too.
	f := Analyze(p, t0, nil, AnalyzeOptions{})
	model := f.Model == ModelLumped || f.Model == ModelLumpedH && strings.HasPrefix(airNote(f), "Air: moving")
	if !model || math.Abs(f.TimeConstant.Seconds()-600) > 6 {
		t.Errorf("model %s (%q), tau %v; want lumped or moving air with 600 s", f.Model, airNote(f), f.TimeConstant)
	}
}

// Conditioning with a hold: the band is entered, left (a door opened) and entered
// again; the hold restarts at the second entry and the state is holding with the
// time left until then.
func TestTrackerHoldRestarts(t *testing.T) {
	tg := Target{Name: "conditioned", Celsius: math.NaN(), Within: 2, Hold: 30 * time.Minute}
	tr := NewTracker([]Target{tg}, TrackerOptions{})
	tr.SetAmbient(23)
	temp := func(s float64) float64 {
		v := 23 - 40*math.Exp(-s/600) // warming toward 23 °C
		if s >= 2400 && s < 2700 {
			v -= 4 // door open: out of the band for five minutes
		}
		return v
	}
	for s := 0.0; s <= 3600; s += 10 {
		tr.Add(secs(s), temp(s))
	}
	f := tr.Fit()
	got := f.Targets[0]
	// Back in the band (within 2 °C of 23) at 2700 s, so the hold ends at 2700 + 1800.
	if got.State != StateHolding || !got.At.Equal(secs(2700+1800)) {
		t.Fatalf("%s until %v, want holding until 4500 s", got.State, got.At.Sub(t0))
	}
	if left := got.At.Sub(f.FittedAt); left != 900*time.Second {
		t.Errorf("time left %v, want 15m0s", left)
	}
}

// A fan switched on 1500 s into a cooling (τ 900 s → 300 s) breaks the residuals: the
// forecast comes from a new segment at the break, with the new time constant, and
// says so.
func TestAnalyzeResidualBreak(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 42))
	var p LumpedProblem
	at1500 := 22 + 300*math.Exp(-1500.0/900)
	for s := 0.0; s <= 1750; s += 5 {
		v := 22 + 300*math.Exp(-s/900)
		if s > 1500 {
			v = 22 + (at1500-22)*math.Exp(-(s-1500)/300)
		}
		p.Times, p.Celsius = append(p.Times, s), append(p.Celsius, v)
	}
	p.Celsius = noisy(rng, p.Celsius, 0.1)
	f := Analyze(p, t0, []Target{{Name: "handle", Celsius: 30}}, AnalyzeOptions{})
	start := f.SegmentStart.Sub(t0).Seconds()
	want := 1500 + 300*math.Log((at1500-22)/8)
	got := f.Targets[0].At.Sub(t0).Seconds()
	if start < 1500 || start > 1600 || !strings.Contains(strings.Join(f.Notes, " "), "disturbance") || math.Abs(got-want) > 0.1*(want-1750) ||
		f.Targets[0].Earliest.Sub(t0).Seconds() > want || f.Targets[0].Latest.Sub(t0).Seconds() < want {
		t.Errorf("segment from %.0f s, 30 °C at %.0f s [%v, %v] (want %.0f), notes %q", start, got,
			f.Targets[0].Earliest.Sub(t0), f.Targets[0].Latest.Sub(t0), want, f.Notes)
	}
}

// The same fan switched on, on a body whose first minutes carry a fast mode (30 K
// decaying with 60 s: a surface sensor on a part not yet uniform) beside a measured
// room: the start transient is left out (afterTransient), and the break must still
// start a new segment — a review found the tail's fit returned without the
// residual-break check.
func TestAnalyzeResidualBreakAfterTransient(t *testing.T) {
	rng := rand.New(rand.NewPCG(43, 44))
	var p LumpedProblem
	at1500 := 22 + 270*math.Exp(-1500.0/900)
	for s := 0.0; s <= 1750; s += 5 {
		v := 22 + 270*math.Exp(-s/900) + 30*math.Exp(-s/60)
		if s > 1500 {
			v = 22 + (at1500-22)*math.Exp(-(s-1500)/300)
		}
		p.Times, p.Celsius, p.Ambient = append(p.Times, s), append(p.Celsius, v), append(p.Ambient, 22)
	}
	p.Celsius = noisy(rng, p.Celsius, 0.1)
	f := Analyze(p, t0, []Target{{Name: "handle", Celsius: 30}}, AnalyzeOptions{})
	start := f.SegmentStart.Sub(t0).Seconds()
	if start < 1500 || start > 1600 || !strings.Contains(strings.Join(f.Notes, " "), "disturbance") {
		t.Errorf("segment from %.0f s, notes %q; want a new segment at the fan (1500 s)", start, f.Notes)
	}
}

// TestAfterTransient: a body heated from inside, read at its surface beside a
// measured room (our own invented record, the shape of the 18650 cell's rests in
// ../shared/realdata): T = 20 + 2.5·e^(−t/1800 s) − 0.5·e^(−t/66 s), the fast mode the
// core's extra heat reaching the surface — a cylinder's second radial mode at Bi = 0.3
// decays 27.4 times faster than its first (ζ·J1(ζ)/J0(ζ) = Bi: ζ1 = 0.7465, ζ2 =
// 3.9091, solved by bisection with J0 and J1 by their series; Incropera et al., Table
// 5.1, lists ζ1 = 0.7465 for Bi = 0.3, from memory) — read every 4 s for 20 minutes with
// 5 mK of noise. The fit of every reading takes the slow start for a long time
// constant and comes late for 20.6 °C (+20 % of the time left); leaving out the first
// eighth (afterTransient) must bring the central estimate within 10 % of the time left
// (+2 % measured) and closer than the whole fit, with a note saying so, and a handling
// limit at the same level never sooner than the whole fit's.
func TestAfterTransient(t *testing.T) {
	const level = 20.6
	truth := func(s float64) float64 { return 20 + 2.5*math.Exp(-s/1800) - 0.5*math.Exp(-s/66) }
	rng := rand.New(rand.NewPCG(3, 4))
	var p LumpedProblem
	for s := 0.0; s <= 1200; s += 4 {
		p.Times = append(p.Times, s)
		p.Celsius = append(p.Celsius, truth(s)+0.005*rng.NormFloat64())
		p.Ambient = append(p.Ambient, 20)
	}
	lo, hi := 1200.0, 1e5 // the crossing, by bisection
	for hi-lo > 0.01 {
		if mid := (lo + hi) / 2; truth(mid) > level {
			lo = mid
		} else {
			hi = mid
		}
	}
	left := lo - 1200
	targets := []Target{{Name: "t", Celsius: level}, {Name: "handle", Celsius: level, Handling: true}}
	f := Analyze(p, t0, targets, AnalyzeOptions{})
	whole, _ := analyze(p, t0, targets, AnalyzeOptions{})
	miss := func(tf TargetForecast) float64 { return (tf.At.Sub(t0).Seconds() - lo) / left }
	got, was := miss(f.Targets[0]), miss(whole.Targets[0])
	t.Logf("crossing %.0f s; after the transient %+.1f %% of the time left, every reading %+.1f %%", lo, 100*got, 100*was)
	if !strings.Contains(strings.Join(f.Notes, " "), "left out of the fit") {
		t.Errorf("no note on the readings left out: %q", f.Notes)
	}
	// The segment stays where it was; the fit used the readings from 152 s on (the
	// first at or after an eighth of 1,200 s, every 4 s).
	if k := int(math.Ceil(1200 * transientShare / 4)); !f.SegmentStart.Equal(t0) || f.Points != len(p.Times)-k {
		t.Errorf("segment from %v with %d readings fitted, want from %v with %d", f.SegmentStart, f.Points, t0, len(p.Times)-k)
	}
	if math.Abs(got) > 0.10 || math.Abs(got) >= math.Abs(was) {
		t.Errorf("central estimate %+.1f %% of the time left after the transient, %+.1f %% from every reading; want within 10 %% and closer", 100*got, 100*was)
	}
	h, w := f.Targets[1], whole.Targets[1]
	if h.At.Before(w.At) || h.Earliest.Before(w.Earliest) || h.Latest.Before(w.Latest) {
		t.Errorf("handling: [%v, %v, %v] after the transient, [%v, %v, %v] from every reading; want never sooner", h.Earliest, h.At, h.Latest, w.Earliest, w.At, w.Latest)
	}
}

// TestNoSoonerMergesCautiously checks how a handling target's forecast after a start
// transient (afterTransient) is merged with the forecast of every reading: never
// sooner at either end or in the middle, and open-ended ("not before" only, no central
// estimate) when either is, since a guessed model leaves handling open on purpose. A
// review found the earlier rule returning the whole fit's closed interval where the
// tail's answer was open (benchmark run40 at 25 % elapsed, under the note that moving
// air was only guessed).
func TestNoSoonerMergesCautiously(t *testing.T) {
	at := func(min float64) time.Time { return t0.Add(time.Duration(min * float64(time.Minute))) }
	closed := func(lo, mid, hi float64) TargetForecast {
		return TargetForecast{Target: Target{Handling: true}, State: StatePredicted, Earliest: at(lo), At: at(mid), Latest: at(hi)}
	}
	open := func(lo float64) TargetForecast {
		return TargetForecast{Target: Target{Handling: true}, State: StatePredicted, Earliest: at(lo)}
	}
	insufficient := TargetForecast{Target: Target{Handling: true}, State: StateInsufficient}
	for _, c := range []struct {
		name        string
		tail, whole TargetForecast
		want        TargetForecast
		fromWhole   bool
	}{
		{"tail later everywhere", closed(20, 30, 40), closed(10, 25, 35), closed(20, 30, 40), false},
		{"whole later at the late end", closed(20, 30, 40), closed(10, 25, 50), closed(20, 30, 50), true},
		{"whole later early", closed(20, 30, 40), closed(25, 28, 35), closed(25, 30, 40), true},
		{"tail open, whole closed", open(20), closed(10, 25, 35), open(20), false},
		{"tail open, whole closed and later early", open(20), closed(22, 25, 35), open(22), true},
		{"tail closed, whole open", closed(20, 30, 40), open(15), open(20), true},
		{"both open", open(20), open(30), open(30), true},
		{"tail not predicted", insufficient, closed(10, 25, 35), closed(10, 25, 35), true},
		{"whole not predicted", closed(20, 30, 40), insufficient, insufficient, true},
	} {
		got, fromWhole := noSooner(c.tail, c.whole)
		if got.State != c.want.State || !got.Earliest.Equal(c.want.Earliest) || !got.At.Equal(c.want.At) || !got.Latest.Equal(c.want.Latest) || fromWhole != c.fromWhole {
			t.Errorf("%s: got %v %v–%v at %v (from whole %v), want %v %v–%v at %v (%v)", c.name,
				got.State, got.Earliest, got.Latest, got.At, fromWhole, c.want.State, c.want.Earliest, c.want.Latest, c.want.At, c.fromWhole)
		}
	}
}

// TestGuessedHandlingStaysOpen runs every benchmark case without its description at
// 10, 25 and 50 % of the time to its target, the target taken as a handling limit,
// and holds the engine to its own notes: where a note says handling limits get "not
// before" only, no handling target carries a central estimate or a late end.
func TestGuessedHandlingStaysOpen(t *testing.T) {
	if testing.Short() {
		t.Skip("benchmark sweep skipped with -short")
	}
	seen := 0
	for _, c := range benchIndex(t).Cases {
		curve := readBenchCase(t, c)
		for _, frac := range fractions {
			part := curve.Until(c.PlacedS + frac*(c.CrossingS-c.PlacedS))
			p, onset, _ := Prepare(part.Times, part.Celsius, part.FilledAmbient())
			f := Analyze(p, origin.Add(seconds(onset)), []Target{{Name: "handle", Celsius: c.Target, Handling: true}}, AnalyzeOptions{})
			guessed := slices.ContainsFunc(f.Notes, func(n string) bool { return strings.Contains(n, `"not before" only`) })
			if !guessed {
				continue
			}
			seen++
			for _, tf := range f.Targets {
				if tf.State == StatePredicted && (!tf.At.IsZero() || !tf.Latest.IsZero()) {
					t.Errorf("%s at %.0f %%: handling %v–%v at %v under the note that it is \"not before\" only", c.File, 100*frac, tf.Earliest, tf.Latest, tf.At)
				}
			}
		}
	}
	t.Logf("%d forecasts carry a note leaving handling \"not before\" only", seen)
	if seen == 0 {
		t.Error("no benchmark forecast leaves handling open: the check checked nothing")
	}
}

// TestMeasuredAmbientNotesNoRoomPrior reads the notes of an unknown specimen fitted
// with h(T) against a measured ambient (benchmark run40, a steel slab under a fan with
// its room logged, at 1,528 s): no note may say the ambient leans on the room prior,
// which only a fitted ambient does (a review read both "the ambient is measured" and
// "the fitted ambient leans on a room prior" in one forecast).
func TestMeasuredAmbientNotesNoRoomPrior(t *testing.T) {
	curve := readBenchCase(t, benchgen.Case{File: "run40.csv"}).Until(1528)
	p, onset, _ := Prepare(curve.Times, curve.Celsius, curve.FilledAmbient())
	if p.Ambient == nil {
		t.Fatal("run40 has no measured ambient")
	}
	f := Analyze(p, origin.Add(seconds(onset)), []Target{{Name: "handle", Celsius: 50, Handling: true}}, AnalyzeOptions{})
	if f.Model != ModelLumpedH {
		t.Fatalf("model %s, want %s (the note under test is h(T)'s)", f.Model, ModelLumpedH)
	}
	for _, n := range f.Notes {
		if strings.Contains(n, "room prior") {
			t.Errorf("note %q, with the ambient measured", n)
		}
	}
}
