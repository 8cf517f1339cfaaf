package journal

import (
	"math"
	"sync"
	"time"

	"github.com/settle-lab/settle/daq"
)

// PlacementOptions tunes DetectPlacement. The zero value is ready to use; each field
// documents its default. The defaults suit specimens tens of degrees away from ambient
// read every few seconds; they are our own choice, not from a standard.
type PlacementOptions struct {
	// Step is the least departure from ambient, °C, that counts as a placement.
	// Zero means 5 °C.
	Step float64
	// Rise is the longest time the departure may take (thermocouple response
	// included). Zero means 2 min.
	Rise time.Duration
	// Baseline is how long the channel must have been quiet (spread at most Step/2)
	// before the step; its mean is the ambient. Zero means 2 min.
	Baseline time.Duration
	// Decay is how long after the peak the decay must be seen. Zero means 2 min.
	Decay time.Duration
	// DecayFraction is the least fraction of the peak excess lost over Decay. Zero
	// means 0.05.
	DecayFraction float64
}

func (o PlacementOptions) withDefaults() PlacementOptions {
	if o.Step <= 0 {
		o.Step = 5
	}
	if o.Rise <= 0 {
		o.Rise = 2 * time.Minute
	}
	if o.Baseline <= 0 {
		o.Baseline = 2 * time.Minute
	}
	if o.Decay <= 0 {
		o.Decay = 2 * time.Minute
	}
	if o.DecayFraction <= 0 {
		o.DecayFraction = 0.05
	}
	return o
}

// Placement is a detected placement of a specimen on a channel.
type Placement struct {
	// Start is the time of the last quiet reading before the step: the run's start.
	Start time.Time
	// Index is the position in the readings given of the reading at Start.
	Index int
	// Peak and PeakCelsius are the reading farthest from ambient.
	Peak        time.Time
	PeakCelsius float64
	// Ambient is the mean of the quiet baseline, °C.
	Ambient float64
	// Hot is true for a specimen warmer than ambient (cooling), false for a cold one.
	Hot bool
}

// DetectPlacement finds the first placement of a specimen in one channel's readings
// (oldest first): a quiet baseline, then within Rise a step of at least Step °C away
// from it, then over Decay a mostly monotonic decay back toward the baseline that loses
// at least DecayFraction of the peak excess. Readings that are not OK are ignored. A step
// with no decay (a probe moved into a bath, a room that warms) is not a placement.
func DetectPlacement(rs []daq.Reading, opt PlacementOptions) (Placement, bool) {
	opt = opt.withDefaults()
	idx := make([]int, 0, len(rs))
	for i, r := range rs {
		if r.OK() && !math.IsNaN(r.Celsius) {
			idx = append(idx, i)
		}
	}
	d := detector{rs: rs, idx: idx, opt: opt}
	for k := range idx {
		if p, ok := d.at(k); ok {
			return p, true
		}
	}
	return Placement{}, false
}

type detector struct {
	rs  []daq.Reading
	idx []int // positions of OK readings in rs
	opt PlacementOptions
}

func (d *detector) t(k int) time.Time { return d.rs[d.idx[k]].Time }
func (d *detector) c(k int) float64   { return d.rs[d.idx[k]].Celsius }

// at tests for a placement whose baseline ends at the k-th OK reading. The placement
// starts at the last reading before the step within Step/4 of the ambient.
func (d *detector) at(k int) (Placement, bool) {
	amb, ok := d.baseline(k)
	if !ok {
		return Placement{}, false
	}
	j := k + 1
	for ; j < len(d.idx) && d.t(j).Sub(d.t(k)) <= d.opt.Rise; j++ {
		if math.Abs(d.c(j)-amb) >= d.opt.Step {
			break
		}
	}
	if j >= len(d.idx) || d.t(j).Sub(d.t(k)) > d.opt.Rise {
		return Placement{}, false
	}
	start := k
	for m := j - 1; m > k; m-- {
		if math.Abs(d.c(m)-amb) <= d.opt.Step/4 {
			start = m
			break
		}
	}
	sign := math.Copysign(1, d.c(j)-amb)
	peak := j
	for m := j; m < len(d.idx) && d.t(m).Sub(d.t(start)) <= d.opt.Rise; m++ {
		if sign*(d.c(m)-amb) > sign*(d.c(peak)-amb) {
			peak = m
		}
	}
	if !d.decays(peak, amb, sign) {
		return Placement{}, false
	}
	return Placement{Start: d.t(start), Index: d.idx[start], Peak: d.t(peak), PeakCelsius: d.c(peak), Ambient: amb, Hot: sign > 0}, true
}

// baseline returns the mean of the readings in the Baseline before and including the
// k-th, when they span at least half of Baseline with a spread of at most Step/2.
func (d *detector) baseline(k int) (float64, bool) {
	lo, hi, sum, n := math.Inf(1), math.Inf(-1), 0.0, 0
	first := k
	for m := k; m >= 0 && d.t(k).Sub(d.t(m)) <= d.opt.Baseline; m-- {
		c := d.c(m)
		lo, hi, sum, n, first = math.Min(lo, c), math.Max(hi, c), sum+c, n+1, m
	}
	if n < 3 || d.t(k).Sub(d.t(first)) < d.opt.Baseline/2 || hi-lo > d.opt.Step/2 {
		return 0, false
	}
	return sum / float64(n), true
}

// decays reports whether, over Decay after the peak, the excess over amb falls by at
// least DecayFraction, with at least 70 % of the steps not rising by more than the
// baseline's tolerance (a common-practice noise allowance, our own choice).
func (d *detector) decays(peak int, amb, sign float64) bool {
	ex0 := sign * (d.c(peak) - amb)
	noise := d.opt.Step / 20
	end, steps, falling := peak, 0, 0
	for m := peak + 1; m < len(d.idx) && d.t(m).Sub(d.t(peak)) <= d.opt.Decay; m++ {
		steps++
		if sign*(d.c(m)-d.c(m-1)) <= noise {
			falling++
		}
		end = m
	}
	if end == peak || d.t(end).Sub(d.t(peak)) < d.opt.Decay*9/10 {
		return false // not enough data after the peak yet
	}
	exEnd := sign * (d.c(end) - amb)
	return exEnd <= (1-d.opt.DecayFraction)*ex0 && exEnd > 0 && float64(falling) >= 0.7*float64(steps)
}

// PlacementWatcher runs DetectPlacement on a sliding window of each channel's
// readings and reports each placement once. It is safe for concurrent use.
type PlacementWatcher struct {
	opt    PlacementOptions
	window time.Duration
	mu     sync.Mutex
	recent map[string][]daq.Reading
	last   map[string]time.Time // reading time of the last detection attempt
}

// watchEvery is the least reading time between detection attempts on a channel.
const watchEvery = 5 * time.Second

// NewPlacementWatcher returns a watcher with the given options.
func NewPlacementWatcher(opt PlacementOptions) *PlacementWatcher {
	opt = opt.withDefaults()
	return &PlacementWatcher{opt: opt, window: opt.Baseline + opt.Rise + opt.Decay, recent: map[string][]daq.Reading{}, last: map[string]time.Time{}}
}

// Observe adds a reading and reports a placement on its channel when one completes. It
// looks at most once per 5 s of reading time per channel. After a report the channel's window restarts at the peak, so a placement is
// reported once.
func (w *PlacementWatcher) Observe(r daq.Reading) (Placement, bool) {
	w.mu.Lock()
	defer w.mu.Unlock()
	rs := append(w.recent[r.Channel], r)
	cut := 0
	for cut < len(rs) && r.Time.Sub(rs[cut].Time) > w.window {
		cut++
	}
	if cut > len(rs)/2 { // compact now and then, keeping memory flat
		rs = append(rs[:0], rs[cut:]...)
		cut = 0
	}
	w.recent[r.Channel] = rs
	if r.Time.Sub(w.last[r.Channel]) < watchEvery {
		return Placement{}, false
	}
	w.last[r.Channel] = r.Time
	p, ok := DetectPlacement(rs[cut:], w.opt)
	if !ok {
		return Placement{}, false
	}
	p.Index += cut
	for i := p.Index; i < len(rs); i++ {
		if !rs[i].Time.Before(p.Peak) {
			w.recent[r.Channel] = append(rs[:0], rs[i:]...)
			break
		}
	}
	return p, true
}
