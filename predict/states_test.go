package predict

import (
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
	"time"
)

// scenario is a generated channel record: what a rack position reads around a
// placement, with the events that fooled earlier versions of the engine.
type scenario struct {
	name     string
	times    []float64 // s
	readings []float64 // °C, with noise
	truth    func(t float64) float64
	room     float64
	measured bool // the ambient is given to the tracker
}

// event is a disturbance added to the noise-free curve: a bump of amplitude (°C) that
// rises over rise seconds from start and then fades with time constant fade.
type event struct{ start, rise, fade, amplitude float64 }

func (e event) at(t float64) float64 {
	switch {
	case t < e.start:
		return 0
	case t < e.start+e.rise:
		return e.amplitude * (t - e.start) / e.rise
	}
	return e.amplitude * math.Exp(-(t-e.start-e.rise)/e.fade)
}

// genScenario draws one record: a baseline at room temperature, a placement at t0
// (the thermocouple warms to the specimen's temperature over a few tens of seconds,
// or the specimen is put into a warmer room), a decay toward the room, re-warms and
// door openings, and gaps in the readings (an unplugged logger).
func genScenario(rng *rand.Rand, i int) scenario {
	room := 18 + 8*rng.Float64()
	hot := rng.IntN(4) != 0
	start := room + 25 + 500*rng.Float64() // a hot specimen
	if !hot {
		start = room - 3 - 12*rng.Float64() // a cold one put into a conditioning room
	}
	tau := 300 + 3000*rng.Float64()
	dt := []float64{2, 5, 10}[rng.IntN(3)]
	t0 := float64(rng.IntN(40)) * dt // baseline before the placement
	rise := 10 + 60*rng.Float64()
	end := t0 + rise + tau*(0.3+2.5*rng.Float64())
	var events []event
	for range rng.IntN(3) {
		// A re-warm (toward the specimen's start) or a door (toward the room), of up
		// to 8 °C and never more than a quarter of the specimen's excursion.
		amp := min(1+7*rng.Float64(), 0.25*math.Abs(start-room)) * math.Copysign(1, start-room)
		if rng.IntN(3) == 0 {
			amp = -amp // a door: the specimen dips toward the room
		}
		events = append(events, event{start: t0 + rise + (end-t0-rise)*rng.Float64(),
			rise: 20 + 100*rng.Float64(), fade: 60 + 300*rng.Float64(), amplitude: amp})
	}
	truth := func(t float64) float64 {
		var v float64
		switch {
		case t < t0:
			v = room
		case t < t0+rise:
			v = room + (start-room)*(t-t0)/rise
		default:
			v = room + (start-room)*math.Exp(-(t-t0-rise)/tau)
		}
		for _, e := range events {
			v += e.at(t)
		}
		return v
	}
	type gap struct{ from, to float64 }
	var gaps []gap
	for range rng.IntN(3) {
		g := t0 + (end-t0)*rng.Float64()
		gaps = append(gaps, gap{g, g + 30 + 900*rng.Float64()})
	}
	noise := 0.05 + 0.25*rng.Float64()
	s := scenario{truth: truth, room: room, measured: rng.IntN(2) == 0}
	s.name = fmt.Sprintf("#%d room %.1f (measured %v) start %.0f τ %.0f dt %g events %v gaps %v",
		i, room, s.measured, start, tau, dt, events, gaps)
	for t := 0.0; t <= end; t += dt {
		if slices.ContainsFunc(gaps, func(g gap) bool { return t >= g.from && t < g.to }) {
			continue
		}
		s.times = append(s.times, t)
		s.readings = append(s.readings, math.Round((truth(t)+noise*rng.NormFloat64())*10)/10)
	}
	return s
}

// TestStatesNeverLie is the property the states table promises, over many generated
// records with placements, re-warms, door openings and gaps, judged at several cutoffs:
//   - no target is "reached" while the median of the latest three readings is on the
//     wrong side of it, nor before any reading was seen clearly on the other side;
//   - no target is "unreachable" when the noise-free curve crosses it later;
//   - a position that has only read the room is "empty", never "reached".
func TestStatesNeverLie(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, *statesSeed))
	cases, cutoffs := 120, []float64{0.15, 0.3, 0.5, 0.75, 1}
	if raceEnabled || testing.Short() {
		cases = 40
	}
	reached, total := 0, 0
	for i := range cases {
		s := genScenario(rng, i)
		targets := scenarioTargets(rng, s)
		for _, frac := range cutoffs {
			n := max(1, int(frac*float64(len(s.times))))
			f := trackScenario(s, n, targets)
			if f == nil {
				continue
			}
			for _, tf := range f.Targets {
				total++
				if tf.State == StateReached {
					reached++
				}
				if msg := checkState(s, n, tf); msg != "" {
					t.Errorf("%s, cutoff %d/%d readings: target %s (%.1f °C) %s; model %s ambient %.2f %v\nnotes: %s",
						s.name, n, len(s.times), tf.Target.Name, tf.Celsius, msg, f.Model, f.Ambient, f.Params, strings.Join(f.Notes, " | "))
				}
			}
		}
	}
	t.Logf("%d target states judged, %d reached", total, reached)
	if reached < total/10 {
		t.Errorf("only %d of %d states reached: the generator no longer exercises the reached rule", reached, total)
	}
}

// scenarioTargets draws a handling (or test-temperature) level between the room and the
// start, so the noise-free curve always crosses it, and a settle band.
func scenarioTargets(rng *rand.Rand, s scenario) []Target {
	peak := peakSide(s)
	level := s.room + (peak-s.room)*(0.1+0.7*rng.Float64())
	return []Target{
		{Name: "handle", Celsius: level, Handling: peak > s.room},
		{Name: "settled", Celsius: math.NaN(), Within: 1 + rng.Float64()},
	}
}

// trackScenario feeds the first n readings to a tracker and fits once.
func trackScenario(s scenario, n int, targets []Target) *Forecast {
	tr := NewTracker(targets, TrackerOptions{FitEvery: 1e6 * time.Hour})
	for i := range n {
		if s.measured {
			tr.SetAmbient(s.room + 0.05*math.Sin(float64(i)))
		}
		tr.Add(t0.Add(seconds(s.times[i])), s.readings[i])
	}
	return tr.Fit()
}

// checkState returns what is wrong with tf given the first n readings, or "".
func checkState(s scenario, n int, tf TargetForecast) string {
	level := tf.Celsius
	switch tf.State {
	case StateReached:
		if tf.Target.IsWithin() {
			return "" // the band's edge moves with the fitted ambient; checked by the fixed targets
		}
		side := math.Copysign(1, peakSide(s)-level) // +1: a hot specimen, above the level is the wrong side
		recent := append([]float64(nil), s.readings[max(0, n-recentReadings):n]...)
		slices.Sort(recent)
		if side*(recent[len(recent)/2]-level) > 0 {
			return fmt.Sprintf("reached while the latest readings' median %.2f °C is on the wrong side", recent[len(recent)/2])
		}
		if !slices.ContainsFunc(s.readings[:n], func(c float64) bool { return side*(c-level) > 0 }) {
			return "reached though no reading was ever on the other side"
		}
	case StateUnreachable:
		if !tf.Target.IsWithin() {
			return "unreachable, but the noise-free curve crosses it"
		}
	}
	return ""
}

// peakSide is the specimen's extreme reading: the peak of a hot specimen, the trough
// of a cold one.
func peakSide(s scenario) float64 {
	hi, lo := slices.Max(s.readings), slices.Min(s.readings)
	if hi-s.room > s.room-lo {
		return hi
	}
	return lo
}

// TestEmptyPositionNeverReady: a position that reads the room, with no run, is empty:
// every target "empty", nothing fitted; a run (SetPlaced) makes it a position with a
// specimen, whose handling target is still never "reached" since it was never seen
// above it.
func TestEmptyPositionNeverReady(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, measured := range []bool{false, true} {
		tr := NewTracker([]Target{{Name: "handle", Celsius: 50, Handling: true},
			{Name: "settled", Celsius: math.NaN(), Within: 1}}, TrackerOptions{FitEvery: time.Hour})
		for i := range 600 {
			if measured {
				tr.SetAmbient(21.5)
			}
			tr.Add(t0.Add(time.Duration(i)*5*time.Second), 21.5+0.3*math.Sin(float64(i)/50)+0.1*rng.NormFloat64())
		}
		f := tr.Fit()
		if !f.Empty || f.Model != "" {
			t.Fatalf("measured %v: Empty %v model %q, want an empty position", measured, f.Empty, f.Model)
		}
		for _, tf := range f.Targets {
			if tf.State != StateEmpty {
				t.Errorf("measured %v: target %s state %s, want empty", measured, tf.Target.Name, tf.State)
			}
		}
		tr.SetPlaced(true)
		f = tr.Fit()
		if f.Empty {
			t.Fatalf("measured %v: still empty with a run active", measured)
		}
		if st := f.Targets[0].State; st == StateReached {
			t.Errorf("measured %v: handling target reached on a position that never read above it", measured)
		}
	}
}

// A specimen hot from the first reading (no baseline, no jump) is a specimen.
func TestHotFromFirstReadingOccupied(t *testing.T) {
	tr := NewTracker([]Target{{Name: "handle", Celsius: 50, Handling: true}}, TrackerOptions{FitEvery: time.Hour})
	for i := range 50 {
		tr.Add(t0.Add(time.Duration(i)*time.Second), 300-0.01*float64(i))
	}
	if f := tr.Fit(); f.Empty {
		t.Fatal("a position reading 300 °C is empty")
	}
}

// TestGapContinuesSegment: a 40-minute gap (an unplugged logger) in which a steel
// part cools by far more than the segment jump continues the segment; the handling
// target crossed inside the gap is reached at the fitted crossing, marked estimated,
// within 2 % of the true crossing, instead of at the replug time.
func TestGapContinuesSegment(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	const room, exc, tau = 21.0, 380.0, 1800.0
	truth := func(s float64) float64 { return room + exc*math.Exp(-s/tau) }
	cross := tau * math.Log(exc/(50-room)) // 4620 s
	tr := NewTracker([]Target{{Name: "handle", Celsius: 50, Handling: true}}, TrackerOptions{FitEvery: time.Minute})
	var before *Forecast
	for s := 0.0; s < 8000; s += 10 {
		if s >= 3000 && s < 5400 { // unplugged for 40 minutes: 166 → 32 °C
			if before == nil {
				before = tr.Fit()
			}
			continue
		}
		tr.SetAmbient(room)
		tr.Add(t0.Add(seconds(s)), truth(s)+0.1*rng.NormFloat64())
	}
	after := tr.Fit()
	if !after.SegmentStart.Equal(before.SegmentStart) {
		t.Fatalf("segment start moved from %v to %v across the gap", before.SegmentStart, after.SegmentStart)
	}
	tf := after.Targets[0]
	if tf.State != StateReached || !tf.Estimated {
		t.Fatalf("state %s estimated %v, want reached and estimated", tf.State, tf.Estimated)
	}
	got := tf.At.Sub(t0).Seconds()
	if math.Abs(got-cross) > 0.02*cross {
		t.Errorf("estimated crossing %.0f s, true %.0f s (replug at 5400 s)", got, cross)
	}
	pre := before.Targets[0]
	if pre.State != StatePredicted || tf.At.Before(pre.Earliest) || tf.At.After(pre.Latest) {
		t.Errorf("crossing %v outside the pre-gap interval [%v, %v] (%s)", tf.At, pre.Earliest, pre.Latest, pre.State)
	}
}

// A handling target reached, then a re-warm above it: no longer reached.
func TestRewarmUnreaches(t *testing.T) {
	tr := NewTracker([]Target{{Name: "handle", Celsius: 50, Handling: true}}, TrackerOptions{FitEvery: time.Hour})
	add := func(from, to, v0, v1 float64) {
		for s := from; s < to; s += 5 {
			tr.SetAmbient(21)
			tr.Add(t0.Add(seconds(s)), v0+(v1-v0)*(s-from)/(to-from))
		}
	}
	add(0, 1200, 90, 48) // cools through 50 °C
	if st := tr.Fit().Targets[0].State; st != StateReached {
		t.Fatalf("after cooling through 50 °C: %s, want reached", st)
	}
	add(1200, 1300, 48, 55) // a neighbour's heat: back above 50 °C
	if st := tr.Fit().Targets[0].State; st == StateReached {
		t.Fatalf("re-warmed to 55 °C: still %s", st)
	}
}

// An ambient sensor is not fitted and has no targets; it is the room.
func TestAmbientSensorNotFitted(t *testing.T) {
	b := NewBench([]ChannelSpec{
		{Name: "plate", Ambient: "room", Targets: []Target{{Name: "handle", Celsius: 50, Handling: true}}},
		{Name: "room"},
		{Name: "air-2", Role: RoleAmbient},
	}, TrackerOptions{FitEvery: time.Second})
	for i := range 100 {
		at := t0.Add(time.Duration(i) * 10 * time.Second)
		b.Observe("room", at, 21.2)
		b.Observe("air-2", at, 21.4)
		b.Observe("plate", at, 21+150*math.Exp(-float64(i)/40))
	}
	b.Restore(func(func(string, time.Time, float64)) {})
	for _, ch := range b.Snapshot() {
		switch ch.Name {
		case "plate":
			if ch.Role != RolePosition || ch.Forecast == nil || ch.Forecast.Empty {
				t.Errorf("plate: role %s forecast %v", ch.Role, ch.Forecast)
			}
		default:
			if ch.Role != RoleAmbient || ch.Forecast != nil || ch.Readings != 100 || ch.LastCelsius < 21 {
				t.Errorf("%s: role %s forecast %v readings %d last %.1f; want an unfitted ambient sensor with its readings",
					ch.Name, ch.Role, ch.Forecast, ch.Readings, ch.LastCelsius)
			}
		}
	}
}

// statesSeed draws TestStatesNeverLie's records; other seeds probe further during
// development: go test ./predict -run TestStatesNeverLie -states.seed 8
var statesSeed = flag.Uint64("states.seed", 2026, "seed of TestStatesNeverLie's generated records")

// TestEarlyDipDoesNotUnreach is the record that seed 8 of TestStatesNeverLie found: a
// cold specimen (13 °C) warming slowly (τ 3000 s) in an unmeasured 24 °C room, with a
// dip and its quick recovery early in the segment, looks settled at 15.6 °C after 990 s.
// The noise-free curve reaches 17.9 °C later, so that target is not unreachable; the
// readings' own last quarters show no slowing that would stop short of it.
func TestEarlyDipDoesNotUnreach(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 8))
	var s scenario
	var targets []Target
	for i := range 16 {
		s = genScenario(rng, i)
		targets = scenarioTargets(rng, s)
	}
	f := trackScenario(s, 99, targets)
	if f == nil || f.Targets[0].State == StateUnreachable || !strings.Contains(strings.Join(f.Notes, " "), "have not slowed enough") {
		t.Fatalf("%s: %+v", s.name, f)
	}
	if msg := checkState(s, 99, f.Targets[0]); msg != "" {
		t.Errorf("%s: %s", s.name, msg)
	}
}

// TestCatchingUpForecastsNoHandling: a hot specimen just placed on a thermocouple that
// reads the room (our own invented record: 21 °C room, a 180 °C specimen, the sensor
// catching up with a time constant of 20 s, read every 2 s, no ambient measured). While
// the readings rise to their peak they look like a specimen warming in an unmeasured
// oven — even once the rise has bent over — so a handling target (50 °C) gets no
// forecast at all: no time, no bound, never reached; nor is a cooling target the
// readings passed on the way up (100 °C) called reached.
func TestCatchingUpForecastsNoHandling(t *testing.T) {
	const room, hot, sensorTau = 21.0, 180.0, 20.0
	rng := rand.New(rand.NewPCG(41, 42))
	var ts, cs []float64
	for s := 0.0; s <= 150; s += 2 {
		ts = append(ts, s)
		cs = append(cs, hot+(room-hot)*math.Exp(-s/sensorTau)+0.1*rng.NormFloat64())
	}
	targets := []Target{{Name: "handle", Celsius: 50, Handling: true}, {Name: "cool", Celsius: 100}}
	for _, upTo := range []float64{10, 30, 60, 100, 150} { // 0.5 to 7.5 sensor time constants
		n := slices.IndexFunc(ts, func(s float64) bool { return s > upTo })
		if n < 0 {
			n = len(ts)
		}
		p, onset, _ := Prepare(ts[:n], cs[:n], nil)
		f := Analyze(p, t0.Add(seconds(onset)), targets, AnalyzeOptions{})
		h := f.Targets[0]
		if h.State != StateInsufficient || !h.At.IsZero() || !h.Earliest.IsZero() || !h.Latest.IsZero() {
			t.Errorf("%.0f s after placing: handling target %s, at %v [%v, %v]; want insufficient with no time\nnotes: %s",
				upTo, h.State, h.At, h.Earliest, h.Latest, strings.Join(f.Notes, " | "))
		}
		if c := f.Targets[1]; c.State == StateReached || c.State == StateUnreachable {
			t.Errorf("%.0f s after placing: the 100 °C target is %s while the readings still rise", upTo, c.State)
		}
	}
}
