package clean

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

var t0 = time.Date(2025, 3, 14, 15, 0, 0, 0, time.UTC)

func reading(ch string, i int, v float64) daq.Reading {
	return daq.Reading{Logger: "rack", Channel: ch, Time: t0.Add(time.Duration(i) * time.Second), Celsius: v}
}

// run feeds values through c and returns everything emitted, Flush included.
func run(c *Cleaner, rs []daq.Reading) []daq.Reading {
	var out []daq.Reading
	for _, r := range rs {
		out = append(out, c.Apply(r)...)
	}
	return append(out, c.Flush()...)
}

// cooling is a specimen cooling from 400 °C with τ = 300 s, sampled every second.
func cooling(n int) []daq.Reading {
	rs := make([]daq.Reading, n)
	for i := range rs {
		rs[i] = reading("disc", i, 20+380*math.Exp(-float64(i)/300))
	}
	return rs
}

func statuses(rs []daq.Reading) map[daq.Status][]int {
	m := map[daq.Status][]int{}
	for i, r := range rs {
		m[r.Status] = append(m[r.Status], i)
	}
	return m
}

func TestSpikeFlaggedInPlace(t *testing.T) {
	rs := cooling(60)
	rs[30].Celsius += 50 // an isolated spike
	rs[40].Celsius += 15 // smaller, on the steeper part: above the window's spread (about 1.1 °C/s)
	out := run(NewWithOptions(Options{}), rs)
	if len(out) != len(rs) {
		t.Fatalf("%d readings out, %d in", len(out), len(rs))
	}
	for i := range out {
		if out[i].Time != rs[i].Time || out[i].Celsius != rs[i].Celsius {
			t.Fatalf("reading %d out of order or changed: %+v", i, out[i])
		}
	}
	got := statuses(out)[daq.StatusSpike]
	if len(got) != 2 || got[0] != 30 || got[1] != 40 {
		t.Errorf("spikes at %v, want [30 40]", got)
	}
	if out[30].Raw != "" && out[30].Raw != fmtFloat(rs[30].Celsius) {
		t.Errorf("spike Raw = %q", out[30].Raw)
	}
}

// TestStepNotSpike: a specimen placed on the rack jumps from room temperature to
// 800 °C; a centred window sees the new level and keeps the step.
func TestStepNotSpike(t *testing.T) {
	var rs []daq.Reading
	for i := range 40 {
		v := 21.0
		if i >= 20 {
			v = 800 - float64(i-20)
		}
		rs = append(rs, reading("disc", i, v))
	}
	if bad := statuses(run(NewWithOptions(Options{}), rs))[daq.StatusSpike]; len(bad) != 0 {
		t.Errorf("step flagged as spikes at %v", bad)
	}
}

func TestDelayIsHalfWindow(t *testing.T) {
	c := NewWithOptions(Options{SpikeWindow: 5})
	rs := cooling(10)
	for i := range 2 {
		if out := c.Apply(rs[i]); len(out) != 0 {
			t.Fatalf("reading %d released %v before 2 newer ones arrived", i, out)
		}
	}
	if out := c.Apply(rs[2]); len(out) != 1 || out[0].Time != rs[0].Time {
		t.Fatalf("third Apply = %+v, want the first reading", out)
	}
	off := NewWithOptions(Options{SpikeWindow: 1})
	if out := off.Apply(rs[0]); len(out) != 1 {
		t.Errorf("window 1: Apply gave %d readings, want 1 at once", len(out))
	}
}

func TestFaultsKeepOrder(t *testing.T) {
	rs := cooling(12)
	rs[4].Status, rs[4].Raw = daq.StatusOpen, "OPEN"
	rs[6].Celsius = 2500 // beyond every thermocouple: out of range
	other := reading("air", 0, 21)
	c := NewWithOptions(Options{})
	var out []daq.Reading
	for i, r := range rs {
		out = append(out, c.Apply(r)...)
		if i == 5 {
			if got := c.Apply(other); len(got) != 0 {
				t.Errorf("another channel's reading released %+v from this one's queue", got)
			}
		}
	}
	out = append(out, c.Flush()...)
	var disc []daq.Reading
	for _, r := range out {
		if r.Channel == "disc" {
			disc = append(disc, r)
		}
	}
	if len(disc) != len(rs) {
		t.Fatalf("%d disc readings out, want %d", len(disc), len(rs))
	}
	for i := range disc {
		if disc[i].Time != rs[i].Time {
			t.Fatalf("disc reading %d is from %v, want %v", i, disc[i].Time, rs[i].Time)
		}
	}
	if disc[4].Status != daq.StatusOpen || disc[6].Status != daq.StatusRange || disc[6].Raw != "2500" {
		t.Errorf("statuses %s %s (raw %q), want open and range 2500", disc[4].Status, disc[6].Status, disc[6].Raw)
	}
	if bad := statuses(disc)[daq.StatusSpike]; len(bad) != 0 {
		t.Errorf("spikes at %v: faults must not enter the window", bad)
	}
	want := map[daq.Status]uint64{daq.StatusOpen: 1, daq.StatusRange: 1}
	for _, n := range c.Counts() {
		if n.Channel != "disc" || want[n.Status] != n.N {
			t.Errorf("count %+v, want disc open 1, range 1", n)
		}
	}
}

func TestStuck(t *testing.T) {
	var rs []daq.Reading
	for i, v := range []float64{50.1, 50.2, 50.2, 50.2, 50.2, 50.2, 50.3, 50.3} {
		rs = append(rs, reading("bath", i, v))
	}
	out := run(New(map[string]Options{"rack": {StuckCount: 4, SpikeWindow: 1}}), rs)
	got := statuses(out)[daq.StatusStuck]
	if len(got) != 2 || got[0] != 4 || got[1] != 5 {
		t.Errorf("stuck at %v, want [4 5] (4th and 5th identical 50.2)", got)
	}
}

// TestNoiseRarelyFlagged: Gaussian noise of 0.1 °C on a steady 100 °C (seeded, so the
// count is fixed) is not taken for spikes: the 0.5 °C floor is 5 standard deviations.
func TestNoiseRarelyFlagged(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	rs := make([]daq.Reading, 2000)
	for i := range rs {
		rs[i] = reading("room", i, 100+0.1*rng.NormFloat64())
	}
	if bad := statuses(run(NewWithOptions(Options{}), rs))[daq.StatusSpike]; len(bad) > 0 {
		t.Errorf("%d of %d noisy readings flagged as spikes, first at %d", len(bad), len(rs), bad[0])
	}
}

func BenchmarkApply(b *testing.B) {
	c := NewWithOptions(Options{})
	rs := cooling(1000)
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		c.Apply(rs[i%len(rs)])
		i++
	}
}
