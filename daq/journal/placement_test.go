package journal

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// curve samples celsius(s) every 2 s for span seconds, with ±0.05 °C uniform noise.
func curve(span int, celsius func(s float64) float64) []daq.Reading {
	rng := rand.New(rand.NewPCG(1, 2))
	var out []daq.Reading
	for s := 0; s <= span; s += 2 {
		c := celsius(float64(s)) + (rng.Float64()-0.5)*0.1
		out = append(out, daq.Reading{Channel: "c1", Time: t0.Add(time.Duration(s) * time.Second), Celsius: c, Status: daq.StatusOK})
	}
	return out
}

// placed is ambient before at, then a specimen of initial temperature t0c cooling (or
// warming) with time constant tau, read through a thermocouple of 5 s response.
func placed(at, ambient, initial, tau float64) func(float64) float64 {
	return func(s float64) float64 {
		if s < at {
			return ambient
		}
		u := s - at
		return ambient + (initial-ambient)*math.Exp(-u/tau)*(1-math.Exp(-u/5))
	}
}

func TestDetectPlacement(t *testing.T) {
	for _, tc := range []struct {
		name     string
		readings []daq.Reading
		found    bool
		hot      bool
		startLo  float64 // seconds, inclusive bounds on Start
		startHi  float64
		ambient  float64
	}{
		{"hot specimen", curve(1200, placed(300, 22, 200, 900)), true, true, 290, 300, 22},
		{"cold specimen warming", curve(1200, placed(400, 23, -18, 600)), true, false, 390, 400, 23},
		{"quiet channel", curve(1200, func(float64) float64 { return 22 }), false, false, 0, 0, 0},
		{"step without decay (probe into a bath)", curve(1200, func(s float64) float64 {
			if s < 300 {
				return 22
			}
			return 60 - 38*math.Exp(-(s-300)/5)
		}), false, false, 0, 0, 0},
		{"slow drift, no step", curve(1200, func(s float64) float64 { return 22 + s/60 }), false, false, 0, 0, 0},
		{"decay not yet long enough", curve(360, placed(300, 22, 200, 900)), false, false, 0, 0, 0},
		{"no quiet baseline before", curve(1200, placed(20, 22, 200, 900)), false, false, 0, 0, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p, ok := DetectPlacement(tc.readings, PlacementOptions{})
			if ok != tc.found {
				t.Fatalf("found %v (%+v), want %v", ok, p, tc.found)
			}
			if !ok {
				return
			}
			start := p.Start.Sub(t0).Seconds()
			if start < tc.startLo || start > tc.startHi || p.Hot != tc.hot || math.Abs(p.Ambient-tc.ambient) > 0.05 {
				t.Errorf("placement %+v (start %.0f s), want start in [%v, %v], hot %v, ambient %v", p, start, tc.startLo, tc.startHi, tc.hot, tc.ambient)
			}
			if !tc.readings[p.Index].Time.Equal(p.Start) {
				t.Errorf("Index %d does not point at Start", p.Index)
			}
		})
	}
}

func TestDetectPlacementIgnoresFaults(t *testing.T) {
	rs := curve(1200, placed(300, 22, 200, 900))
	for i := 0; i < len(rs); i += 7 { // open-circuit readings read as a rail value
		rs[i].Status, rs[i].Celsius = daq.StatusOpen, 1370
	}
	p, ok := DetectPlacement(rs, PlacementOptions{})
	if !ok || p.Start.Sub(t0) < 280*time.Second || p.Start.Sub(t0) > 300*time.Second {
		t.Fatalf("with faults: %+v, %v; want a placement starting 280..300 s", p, ok)
	}
}

func TestPlacementWatcherReportsOnce(t *testing.T) {
	w := NewPlacementWatcher(PlacementOptions{})
	first := curve(3000, placed(300, 22, 200, 900))
	var got []Placement
	for _, r := range first {
		if p, ok, _ := w.Observe(r); ok {
			got = append(got, p)
			if d := r.Time.Sub(p.Peak); d < 2*time.Minute*9/10 || d > 2*time.Minute+10*time.Second {
				t.Errorf("reported %v after the peak, want about the 2 min decay window", d)
			}
		}
	}
	if len(got) != 1 || got[0].Start.Sub(t0) < 290*time.Second || got[0].Start.Sub(t0) > 300*time.Second {
		t.Fatalf("placements %+v, want exactly one starting 290..300 s", got)
	}
	other := daq.Reading{Channel: "c2", Time: t0, Celsius: 22, Status: daq.StatusOK}
	if _, ok, _ := w.Observe(other); ok {
		t.Error("a single reading of another channel reported a placement")
	}
}

// sampled is like curve with a chosen reading interval and no noise.
func sampled(span, every time.Duration, celsius func(s float64) float64) []daq.Reading {
	var out []daq.Reading
	for d := time.Duration(0); d <= span; d += every {
		out = append(out, daq.Reading{Channel: "c1", Time: t0.Add(d), Celsius: celsius(d.Seconds()), Status: daq.StatusOK})
	}
	return out
}

// The issue-14 cases: a specimen hot at the first reading, and a placement after a
// baseline shorter than the default 2 min.
func TestDetectPlacementHotStartAndShortBaseline(t *testing.T) {
	for _, tc := range []struct {
		name            string
		readings        []daq.Reading
		hotStart, found bool
		startS          float64
		ambient         float64
	}{
		{"hot at the first reading", sampled(10*time.Minute, 2*time.Second, placed(-60, 22, 300, 600)), true, true, 0, 20},
		{"cold at the first reading", sampled(10*time.Minute, 2*time.Second, placed(-60, 22, -40, 600)), true, true, 0, 20},
		{"22 to 300 after a 40 s baseline", sampled(10*time.Minute, time.Second, placed(40, 22, 300, 600)), false, true, 39, 22},
		{"warm room at the first reading, no decay", sampled(10*time.Minute, 2*time.Second, func(float64) float64 { return 40 }), false, false, 0, 0},
		{"a 2 °C wobble 40 s before the step keeps the baseline", sampled(10*time.Minute, 2*time.Second, func(x float64) float64 {
			if x == 100 {
				return 24
			}
			return placed(140, 22, 300, 600)(x)
		}), false, true, 140, 22},
		{"baseline of 20 s only is too short", sampled(10*time.Minute, 2*time.Second, placed(20, 22, 300, 600)), false, false, 0, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p, ok := DetectPlacement(tc.readings, PlacementOptions{})
			if ok != tc.found {
				t.Fatalf("found %v (%+v), want %v", ok, p, tc.found)
			}
			if !ok {
				return
			}
			if p.HotStart != tc.hotStart || math.Abs(p.Start.Sub(t0).Seconds()-tc.startS) > 1 || math.Abs(p.Ambient-tc.ambient) > 0.05 {
				t.Errorf("placement %+v (start %v), want hot start %v, start %v s, ambient %v", p, p.Start.Sub(t0), tc.hotStart, tc.startS, tc.ambient)
			}
			if found := p.Peak.Sub(t0); found > 5*time.Minute {
				t.Errorf("peak at %v, want within the rise window", found)
			}
		})
	}
}

func TestPlacementStatusShowsDecisions(t *testing.T) {
	d := NewPlacementDetector(PlacementOptions{})
	rs := sampled(10*time.Minute, 2*time.Second, placed(120, 22, 200, 600))
	var phases []string
	for _, r := range rs {
		_, ok := d.Observe(r)
		st := d.Status()
		if len(phases) == 0 || phases[len(phases)-1] != st.Phase {
			phases = append(phases, st.Phase)
		}
		if ok {
			if st.Decision != "placement: decay seen" || st.Decided == nil || !st.Decided.Equal(r.Time) {
				t.Errorf("status after the placement %+v, want the decision at %v", st, r.Time)
			}
			break
		}
	}
	want := []string{PhaseBaseline, PhaseQuiet, PhaseDecay, PhaseBaseline}
	if !slices.Equal(phases, want) {
		t.Errorf("phases %v, want %v", phases, want)
	}
}

// BenchmarkPlacementPerReading measures the detector's cost per reading at 1, 10 and
// 100 readings per second (it must not grow with the rate: constant work per reading).
func BenchmarkPlacementPerReading(b *testing.B) {
	for _, hz := range []int{1, 10, 100} {
		b.Run(fmt.Sprintf("%dHz", hz), func(b *testing.B) {
			every := time.Second / time.Duration(hz)
			rs := sampled(20*time.Minute, every, placed(300, 22, 200, 900))
			w := NewPlacementWatcher(PlacementOptions{})
			b.ReportAllocs()
			for i := range b.N {
				r := rs[i%len(rs)]
				r.Time = t0.Add(time.Duration(i) * every)
				w.Observe(r)
			}
		})
	}
}

func BenchmarkPlacementWatcher(b *testing.B) {
	rs := curve(3000, placed(300, 22, 200, 900))
	w := NewPlacementWatcher(PlacementOptions{})
	b.ReportAllocs()
	for i := range b.N {
		r := rs[i%len(rs)]
		r.Time = t0.Add(time.Duration(i) * 2 * time.Second)
		w.Observe(r)
	}
}
