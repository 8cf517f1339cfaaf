package journal

import (
	"math"
	"sync"
	"time"

	"github.com/settle-lab/settle/daq"
)

// PlacementOptions tunes placement detection. The zero value is ready to use; each
// field documents its default. The defaults suit specimens tens of degrees away from
// ambient read every few seconds; they are our own choice, not from a standard.
type PlacementOptions struct {
	// Step is the least departure from ambient, °C, that counts as a placement.
	// Zero means 5 °C.
	Step float64
	// Rise is the longest time the departure may take (thermocouple response
	// included), and the time within which the peak is looked for. Zero means 2 min.
	Rise time.Duration
	// Baseline is the longest quiet stretch (spread at most Step/2) whose mean is
	// taken as the ambient. Zero means 2 min.
	Baseline time.Duration
	// MinBaseline is the shortest quiet stretch that may serve as a baseline, with at
	// least 5 readings in it. Zero means 30 s.
	MinBaseline time.Duration
	// Decay is how long after the peak the decay must be seen. Zero means 2 min.
	Decay time.Duration
	// DecayFraction is the least fraction of the peak excess lost over Decay. Zero
	// means 0.05.
	DecayFraction float64
	// Room is the ambient assumed for a specimen already hot (or cold) at the first
	// reading, when no quiet baseline could be seen. Zero means 20 °C.
	Room float64
	// HotStart is the least distance from Room, °C, of a first reading taken as a
	// specimen already placed. Zero means 3 × Step.
	HotStart float64
}

func (o PlacementOptions) withDefaults() PlacementOptions {
	def := func(d *time.Duration, v time.Duration) {
		if *d <= 0 {
			*d = v
		}
	}
	if o.Step <= 0 {
		o.Step = 5
	}
	def(&o.Rise, 2*time.Minute)
	def(&o.Baseline, 2*time.Minute)
	def(&o.MinBaseline, 30*time.Second)
	o.MinBaseline = min(o.MinBaseline, o.Baseline)
	def(&o.Decay, 2*time.Minute)
	if o.DecayFraction <= 0 {
		o.DecayFraction = 0.05
	}
	if o.Room == 0 {
		o.Room = 20
	}
	if o.HotStart <= 0 {
		o.HotStart = 3 * o.Step
	}
	return o
}

// Placement is a detected placement of a specimen on a channel.
type Placement struct {
	// Start is the time of the last quiet reading before the step (for a hot start,
	// the first reading): the run's start.
	Start time.Time
	// Index is the position of the reading at Start in the readings given to
	// DetectPlacement (the count of readings observed before it, for a watcher).
	Index int
	// Peak and PeakCelsius are the reading farthest from ambient.
	Peak        time.Time
	PeakCelsius float64
	// Ambient is the mean of the quiet baseline, °C (Options.Room for a hot start).
	Ambient float64
	// Hot is true for a specimen warmer than ambient (cooling), false for a cold one.
	Hot bool
	// HotStart is true when the specimen was already away from the room at the
	// channel's first reading, so no baseline was seen.
	HotStart bool
	// Baseline is the length of the quiet stretch used (zero for a hot start).
	Baseline time.Duration
}

// DetectPlacement finds the first placement of a specimen in one channel's readings
// (oldest first). See PlacementDetector for the rule. Readings that are not OK are
// ignored.
func DetectPlacement(rs []daq.Reading, opt PlacementOptions) (Placement, bool) {
	d := NewPlacementDetector(opt)
	for _, r := range rs {
		if p, ok := d.Observe(r); ok {
			return p, true
		}
	}
	return Placement{}, false
}

// The phases of a PlacementDetector, as shown in the API.
const (
	PhaseWaiting  = "waiting"  // no usable reading yet
	PhaseBaseline = "baseline" // collecting a quiet baseline
	PhaseQuiet    = "quiet"    // baseline ready: watching for a step
	PhaseStep     = "step"     // a departure under way, not yet Step away
	PhaseDecay    = "decay"    // Step away: watching the decay toward ambient
)

// PlacementStatus is a detector's current state and its last decision.
type PlacementStatus struct {
	// Phase is one of the Phase constants.
	Phase string `json:"phase"`
	// Ambient is the baseline mean (phases quiet, step, decay), °C.
	Ambient *float64 `json:"ambient_c,omitempty"`
	// BaselineSeconds is the quiet stretch seen so far.
	BaselineSeconds float64 `json:"baseline_s"`
	// Peak is the time of the reading farthest from ambient (phase decay).
	Peak *time.Time `json:"peak,omitempty"`
	// PeakCelsius is that reading's value.
	PeakCelsius *float64 `json:"peak_c,omitempty"`
	// Decision is the last decision and why.
	Decision string `json:"decision,omitempty"`
	// Decided is the reading time of the last decision.
	Decided *time.Time `json:"decided,omitempty"`
}

// bucketCount is how many time buckets summarise the baseline window.
const bucketCount = 24

// bucket summarises the readings of one slice of the baseline window.
type bucket struct {
	start  time.Time
	lo, hi float64
	sum    float64
	n      int
	first  time.Time
}

// PlacementDetector finds placements in one channel's readings, one reading at a time,
// in constant time and memory per reading. The rule:
//
//   - Baseline: the readings of the last Baseline (at least MinBaseline and 5
//     readings) spread by at most Step/2; their mean is the ambient.
//   - Step: within Rise of the baseline's end a reading at least Step away from
//     the ambient. The run starts at the last reading within Step/4 of the ambient.
//   - Peak: the reading farthest from the ambient within Rise of the start.
//   - Decay: over Decay after the peak the excess falls by at least DecayFraction
//     and stays on the same side, with at least 70 % of the steps not moving away
//     by more than Step/20.
//   - Hot start: when the channel's first reading is HotStart or more from Room,
//     the first reading is the start and the peak, Room the ambient, and the same
//     decay is required.
//
// A step without the decay (a probe moved into a bath, a room that warms) is not a
// placement; the detector then starts a new baseline. It is not safe for concurrent use.
type PlacementDetector struct {
	opt      PlacementOptions
	n        int // readings observed
	phase    string
	buckets  [bucketCount]bucket
	width    time.Duration
	last     daq.Reading // the previous OK reading
	lastIdx  int         // its index
	amb      float64
	baseSpan time.Duration
	baseEnd  time.Time
	sign     float64
	hotStart bool
	start    time.Time
	startIdx int
	peak     daq.Reading
	steps    int
	falling  int
	decision string
	decided  time.Time
}

// NewPlacementDetector returns a detector with the given options.
func NewPlacementDetector(opt PlacementOptions) *PlacementDetector {
	opt = opt.withDefaults()
	return &PlacementDetector{opt: opt, phase: PhaseWaiting, width: opt.Baseline / (bucketCount - 1)}
}

// Status returns the detector's phase and last decision.
func (d *PlacementDetector) Status() PlacementStatus {
	s := PlacementStatus{Phase: d.phase, Decision: d.decision}
	if !d.decided.IsZero() {
		t := d.decided
		s.Decided = &t
	}
	switch d.phase {
	case PhaseBaseline, PhaseQuiet:
		_, span, _ := d.baseline()
		s.BaselineSeconds = span.Seconds()
	case PhaseStep, PhaseDecay:
		s.BaselineSeconds = d.baseSpan.Seconds()
	}
	if d.phase == PhaseQuiet {
		if amb, _, ok := d.baseline(); ok {
			s.Ambient = &amb
		}
	}
	if d.phase == PhaseStep || d.phase == PhaseDecay {
		amb := d.amb
		s.Ambient = &amb
	}
	if d.phase == PhaseDecay {
		t, c := d.peak.Time, d.peak.Celsius
		s.Peak, s.PeakCelsius = &t, &c
	}
	return s
}

// Observe takes the next reading and reports a placement when one completes.
func (d *PlacementDetector) Observe(r daq.Reading) (Placement, bool) {
	idx := d.n
	d.n++
	if !r.OK() || math.IsNaN(r.Celsius) {
		return Placement{}, false
	}
	defer func() { d.last, d.lastIdx = r, idx }()
	switch d.phase {
	case PhaseWaiting:
		if math.Abs(r.Celsius-d.opt.Room) >= d.opt.HotStart {
			d.amb, d.sign, d.hotStart, d.baseSpan = d.opt.Room, math.Copysign(1, r.Celsius-d.opt.Room), true, 0
			d.start, d.startIdx = r.Time, idx
			d.enterDecay(r, "hot start: first reading far from the room; watching the decay")
			return Placement{}, false
		}
		d.restart(r, "")
	case PhaseBaseline, PhaseQuiet:
		d.quiet(r)
	case PhaseStep:
		d.stepping(r)
	case PhaseDecay:
		return d.decaying(r)
	}
	return Placement{}, false
}

// restart begins a new baseline at r.
func (d *PlacementDetector) restart(r daq.Reading, why string) {
	d.buckets = [bucketCount]bucket{}
	d.phase, d.hotStart = PhaseBaseline, false
	d.add(r)
	if why != "" {
		d.decide(r.Time, why)
	}
}

func (d *PlacementDetector) decide(t time.Time, why string) {
	d.decision, d.decided = why, t
}

// quiet handles a reading while a baseline is collected or ready.
func (d *PlacementDetector) quiet(r daq.Reading) {
	amb, span, ok := d.baseline()
	if !ok {
		d.phase = PhaseBaseline
		d.add(r)
		return
	}
	d.phase = PhaseQuiet
	dev := math.Abs(r.Celsius - amb)
	lo, hi := d.spread()
	switch {
	case dev >= d.opt.Step:
		d.amb, d.baseSpan, d.baseEnd = amb, span, d.last.Time
		d.sign = math.Copysign(1, r.Celsius-amb)
		d.start, d.startIdx = d.last.Time, d.lastIdx
		d.enterDecay(r, "step from a quiet baseline; watching the peak and the decay")
	case math.Max(hi, r.Celsius)-math.Min(lo, r.Celsius) <= d.opt.Step/2:
		d.add(r)
	case dev > d.opt.Step/4:
		// Leaving the baseline slowly: a step in progress, or a drift.
		d.amb, d.baseSpan, d.baseEnd = amb, span, d.last.Time
		d.start, d.startIdx = d.last.Time, d.lastIdx
		d.phase = PhaseStep
	default:
		d.add(r)
	}
}

// stepping handles a reading while a departure is under way: it becomes a step when
// it reaches Step within Rise of the baseline's end, a wobble when it comes back within
// Step/4 of the ambient first, a drift otherwise.
func (d *PlacementDetector) stepping(r daq.Reading) {
	dev := math.Abs(r.Celsius - d.amb)
	switch {
	case r.Time.Sub(d.baseEnd) > d.opt.Rise:
		d.restart(r, "departure too slow for a placement (a drift): new baseline")
	case dev >= d.opt.Step:
		d.sign = math.Copysign(1, r.Celsius-d.amb)
		d.enterDecay(r, "step from a quiet baseline; watching the peak and the decay")
	case dev <= d.opt.Step/4:
		d.phase = PhaseQuiet // back at the ambient: a wobble, the baseline goes on
		d.add(r)
	}
}

// enterDecay takes r as the first peak.
func (d *PlacementDetector) enterDecay(r daq.Reading, why string) {
	d.phase, d.peak, d.steps, d.falling = PhaseDecay, r, 0, 0
	d.decide(r.Time, why)
}

// decaying tracks the peak (within Rise of the start) and then the decay.
func (d *PlacementDetector) decaying(r daq.Reading) (Placement, bool) {
	if d.sign*(r.Celsius-d.peak.Celsius) > 0 && r.Time.Sub(d.start) <= d.opt.Rise {
		d.peak, d.steps, d.falling = r, 0, 0
		return Placement{}, false
	}
	d.steps++
	if d.sign*(r.Celsius-d.last.Celsius) <= d.opt.Step/20 {
		d.falling++
	}
	since := r.Time.Sub(d.peak.Time)
	if since < d.opt.Decay*9/10 {
		return Placement{}, false
	}
	ex0, ex := d.sign*(d.peak.Celsius-d.amb), d.sign*(r.Celsius-d.amb)
	lost := ex <= (1-d.opt.DecayFraction)*ex0 && ex > 0
	steady := float64(d.falling) >= 0.7*float64(d.steps)
	if !lost || !steady {
		why := "no decay after the step (a probe moved, a room that changed): new baseline"
		if d.hotStart {
			why = "hot start without a decay toward the room: new baseline"
		}
		d.restart(r, why)
		return Placement{}, false
	}
	p := Placement{Start: d.start, Index: d.startIdx, Peak: d.peak.Time, PeakCelsius: d.peak.Celsius,
		Ambient: d.amb, Hot: d.sign > 0, HotStart: d.hotStart, Baseline: d.baseSpan}
	d.restart(r, "placement: decay seen")
	return p, true
}

// add puts r in the baseline buckets.
func (d *PlacementDetector) add(r daq.Reading) {
	slot := int(r.Time.UnixNano()/int64(d.width)) % bucketCount
	if slot < 0 {
		slot += bucketCount
	}
	bs := r.Time.Truncate(d.width)
	b := &d.buckets[slot]
	if !b.start.Equal(bs) || b.n == 0 {
		*b = bucket{start: bs, lo: r.Celsius, hi: r.Celsius, first: r.Time}
	}
	b.lo, b.hi = math.Min(b.lo, r.Celsius), math.Max(b.hi, r.Celsius)
	b.sum += r.Celsius
	b.n++
}

// live reports whether b holds readings of the Baseline before the newest reading.
func (d *PlacementDetector) live(b *bucket) bool {
	return b.n > 0 && !d.last.Time.IsZero() && d.last.Time.Sub(b.start) < d.opt.Baseline
}

// baseline returns the mean and span of the buckets in the window and whether they
// make a baseline (at least MinBaseline and 5 readings, spread at most Step/2).
func (d *PlacementDetector) baseline() (mean float64, span time.Duration, ok bool) {
	sum, n := 0.0, 0
	var first time.Time
	for i := range d.buckets {
		b := &d.buckets[i]
		if !d.live(b) {
			continue
		}
		sum, n = sum+b.sum, n+b.n
		if first.IsZero() || b.first.Before(first) {
			first = b.first
		}
	}
	if n == 0 {
		return 0, 0, false
	}
	span = d.last.Time.Sub(first)
	lo, hi := d.spread()
	return sum / float64(n), span, n >= 5 && span >= d.opt.MinBaseline && hi-lo <= d.opt.Step/2
}

// spread returns the lowest and highest value in the window's buckets.
func (d *PlacementDetector) spread() (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for i := range d.buckets {
		if b := &d.buckets[i]; d.live(b) {
			lo, hi = math.Min(lo, b.lo), math.Max(hi, b.hi)
		}
	}
	return lo, hi
}

// PlacementWatcher runs a PlacementDetector per channel and reports each placement
// once. It is safe for concurrent use.
type PlacementWatcher struct {
	opt  PlacementOptions
	mu   sync.Mutex
	dets map[string]*PlacementDetector
}

// NewPlacementWatcher returns a watcher with the given options.
func NewPlacementWatcher(opt PlacementOptions) *PlacementWatcher {
	return &PlacementWatcher{opt: opt, dets: map[string]*PlacementDetector{}}
}

// Observe adds a reading and reports a placement on its channel when one completes,
// together with the detector's last decision when the reading changed it (empty
// otherwise), for the log.
func (w *PlacementWatcher) Observe(r daq.Reading) (p Placement, found bool, decision string) {
	w.mu.Lock()
	defer w.mu.Unlock()
	d := w.dets[r.Channel]
	if d == nil {
		d = NewPlacementDetector(w.opt)
		w.dets[r.Channel] = d
	}
	before := d.decided
	p, found = d.Observe(r)
	if !d.decided.Equal(before) {
		decision = d.decision
	}
	return p, found, decision
}

// Status returns each watched channel's detector status, by channel.
func (w *PlacementWatcher) Status() map[string]PlacementStatus {
	w.mu.Lock()
	defer w.mu.Unlock()
	out := make(map[string]PlacementStatus, len(w.dets))
	for ch, d := range w.dets {
		out[ch] = d.Status()
	}
	return out
}
