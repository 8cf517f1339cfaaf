package predict

import (
	"fmt"
	"math"
	"slices"
	"sync"
	"time"
)

// TrackerOptions tunes a Tracker. The zero value is ready to use; each field documents
// its default.
type TrackerOptions struct {
	// FitEvery is the least reading time between fits. Zero means 10 s.
	FitEvery time.Duration
	// MinNewPoints is the least number of new readings between fits. Zero means 5. A
	// fit runs when both FitEvery and MinNewPoints have been met, whichever is later.
	MinNewPoints int
	// MinFitGap is the least wall-clock time between fits; zero means none. A daemon
	// sets it so that a time-lapse or a fast replay, whose reading time runs far ahead
	// of the wall clock, cannot spend all the CPU on fits. Readings that arrive inside
	// the gap are fitted by the next reading after it, or by FitPending.
	MinFitGap time.Duration
	// MaxPoints caps the readings kept per segment. Zero means 4096; values below 16
	// count as 16. When full, the oldest half is thinned 2:1 (every other reading
	// dropped), so old data keep their shape at a coarser spacing.
	MaxPoints int
	// Jump is the step between consecutive readings, °C, that starts a new segment.
	// Zero means 20 °C.
	Jump float64
	// Fit tunes the lumped fit.
	Fit LumpedSettings
	// Specimen, when non-nil, describes the channel's specimen (surface law of the
	// h(T) model, Biot number); nil assumes DefaultSurfaceLaw.
	Specimen *Specimen
	// Interval tunes the forecast intervals.
	Interval IntervalSettings
}

func (o TrackerOptions) withDefaults() TrackerOptions {
	if o.FitEvery == 0 {
		o.FitEvery = 10 * time.Second
	}
	if o.MinNewPoints == 0 {
		o.MinNewPoints = 5
	}
	if o.MaxPoints == 0 {
		o.MaxPoints = 4096
	}
	o.MaxPoints = max(o.MaxPoints, 16)
	if o.Jump == 0 {
		o.Jump = 20
	}
	return o
}

// point is one stored reading: seconds from the segment start, °C, and the measured
// ambient at that time (NaN when none was known yet).
type point struct {
	t, celsius, ambient float64
}

// Tracker turns one channel's readings into a Forecast with the lumped model. It is
// safe for concurrent use. When the schedule in TrackerOptions says a fit is due, Add
// runs it before returning, or, for a tracker of a running Bench, hands it to the
// bench's fit workers; either way the fit runs outside the tracker's lock, on a copy of
// the segment, so Forecast and a Bench's Snapshot never wait for one.
//
// Segments: a segment starts at the first reading and a new one at a step of more
// than Jump that the next reading confirms (a single outlying reading is dropped as a
// spike instead). Within a segment the fit starts at the Onset (the peak a freshly
// placed specimen reads its way up to), and spikes are left out (Prepare).
type Tracker struct {
	mu      sync.Mutex
	opt     TrackerOptions
	targets []Target

	pts      []point
	start    time.Time // first reading of the segment
	last     time.Time
	lastC    float64
	pending  *point // a reading that jumped by more than Jump, awaiting confirmation
	pendAt   time.Time
	readings int
	amb      float64 // latest measured ambient, NaN when none
	fitAt    time.Time
	fitWall  time.Time // wall-clock time of the last fit (for MinFitGap)
	hold     bool      // Restore is loading readings: no fits until it ends
	newPts   int
	forecast *Forecast // as fitted; Forecast and state re-anchor it (lead, updated)
	lead     float64   // s: how far the readings since are ahead of the fit's curve (reanchor.go)
	updated  time.Time // the reading the lead was taken at (zero: none since the fit)
	placed   bool      // a run is active on the channel (SetPlaced)

	gen     uint64         // counts segments: a fit of an older one is discarded
	fitting bool           // a fit is running (at most one at a time)
	every   time.Duration  // the reading time between fits the last forecast calls for (fitInterval); 0: FitEvery
	sched   func(*Tracker) // hands a due fit to a Bench's workers; nil: fit in Add
	queued  bool           // handed to sched and not yet started
	phase   time.Duration  // on a running Bench (sched set): where this channel's fits fall in FitEvery (see fitFrom)
	rephase bool           // the next fit realigns the schedule to the phase
	stats   *fitStats      // its Bench's fit counters; nil for a tracker of its own
}

// NewTracker returns a tracker forecasting the given targets.
func NewTracker(targets []Target, opt TrackerOptions) *Tracker {
	return &Tracker{
		opt:     opt.withDefaults(),
		targets: append([]Target(nil), targets...),
		amb:     math.NaN(),
		lastC:   math.NaN(),
	}
}

// SetAmbient records a measured ambient reading; readings added from now on are fitted
// with the ambient known. Non-finite values are ignored.
func (tr *Tracker) SetAmbient(celsius float64) {
	if math.IsNaN(celsius) || math.IsInf(celsius, 0) {
		return
	}
	tr.mu.Lock()
	tr.amb = celsius
	tr.mu.Unlock()
}

// Add records an OK reading and refits when due. Non-finite values and readings older
// than the last one are ignored.
func (tr *Tracker) Add(at time.Time, celsius float64) {
	if math.IsNaN(celsius) || math.IsInf(celsius, 0) {
		return
	}
	if tr.add(at, celsius) {
		tr.fitNow()
	}
}

// add stores a reading and reports whether a fit is due that the caller must run (a
// due fit of a tracker with a scheduler is handed to it instead).
func (tr *Tracker) add(at time.Time, celsius float64) bool {
	tr.mu.Lock()
	defer tr.mu.Unlock()
	if tr.readings > 0 && at.Before(tr.last) {
		return false
	}
	tr.readings++
	switch {
	case len(tr.pts) == 0 && tr.pending == nil:
		tr.newSegment(at)
	case tr.pending != nil && math.Abs(celsius-tr.pending.celsius) <= tr.opt.Jump:
		// The jump holds: a new specimen or a disturbance; start a segment at it.
		p := *tr.pending
		tr.newSegment(tr.pendAt)
		tr.pts = append(tr.pts, point{0, p.celsius, p.ambient})
	case math.Abs(celsius-tr.lastC) > tr.opt.Jump && tr.pending == nil && !tr.followsCurve(at, celsius):
		tr.pending, tr.pendAt = &point{celsius: celsius, ambient: tr.amb}, at
		tr.last = at
		return false
	}
	tr.pending = nil
	tr.last, tr.lastC = at, celsius
	if len(tr.pts) >= tr.opt.MaxPoints {
		tr.thin()
	}
	tr.pts = append(tr.pts, point{at.Sub(tr.start).Seconds(), celsius, tr.amb})
	tr.newPts++
	tr.anchor()
	if tr.contradictsReady(celsius) { // refit now: "ready" must not outlive the readings
		tr.fitAt, tr.newPts = time.Time{}, max(tr.newPts, tr.opt.MinNewPoints)
	}
	if !tr.due() {
		return false
	}
	if tr.sched != nil {
		if !tr.queued {
			tr.queued = true
			tr.sched(tr)
		}
		return false
	}
	return true
}

// contradictsReady reports whether a new reading lies above a handling target the
// current forecast has as reached (a specimen that warms again: put back in the oven,
// or a warmer one set down on the position with less than a jump): the next fit then
// comes at once instead of on the schedule, so the "ready" it judges from the latest
// readings lasts no longer than they show it. Callers hold mu.
func (tr *Tracker) contradictsReady(celsius float64) bool {
	f := tr.forecast
	if f == nil || f.Empty {
		return false
	}
	for _, tf := range f.Targets {
		if tf.Target.Handling && tf.State == StateReached && celsius > tf.Celsius {
			return true
		}
	}
	return false
}

// followsCurve reports whether a reading lies within Jump of the current fit's curve:
// after a gap in the readings (an unplugged logger, a pause) a specimen has moved on
// by as much as the fit expects, which continues the segment rather than starting
// one. Callers hold mu.
func (tr *Tracker) followsCurve(at time.Time, celsius float64) bool {
	f := tr.forecast
	if f == nil || f.Empty || f.Curve == nil {
		return false
	}
	v := f.Curve(at.Add(seconds(tr.lead)))
	return !math.IsNaN(v) && !math.IsInf(v, 0) && math.Abs(celsius-v) <= tr.opt.Jump
}

// observeOnly records the latest reading of a channel that is not fitted (an ambient
// sensor).
func (tr *Tracker) observeOnly(at time.Time, celsius float64) {
	if math.IsNaN(celsius) || math.IsInf(celsius, 0) {
		return
	}
	tr.mu.Lock()
	defer tr.mu.Unlock()
	if tr.readings > 0 && at.Before(tr.last) {
		return
	}
	tr.readings++
	tr.last, tr.lastC = at, celsius
}

// SetPlaced says whether a specimen is known to be on the channel (a run is active):
// such a position is never empty. A change refits at the next chance.
func (tr *Tracker) SetPlaced(placed bool) {
	tr.mu.Lock()
	defer tr.mu.Unlock()
	if tr.placed != placed {
		tr.placed = placed
		tr.fitAt, tr.newPts = time.Time{}, max(tr.newPts, tr.opt.MinNewPoints)
		tr.rephase = true // a rack's runs start together: keep their fits apart
	}
}

// due reports whether the schedule calls for a fit now. Callers hold mu.
func (tr *Tracker) due() bool {
	every := tr.opt.FitEvery
	if tr.every > 0 {
		every = tr.every
	}
	return !tr.hold && !tr.fitting && tr.newPts >= tr.opt.MinNewPoints && tr.last.Sub(tr.fitAt) >= every &&
		(tr.opt.MinFitGap <= 0 || time.Since(tr.fitWall) >= tr.opt.MinFitGap)
}

// fitFrom is the reading time FitEvery counts from after a fit that starts now: the
// last reading; or, for a channel's first fit on a running Bench (of a segment, since
// the phases were set, or since SetPlaced changed), the point of its phase's grid
// (FitEvery apart, offset by phase) nearest to it. Channels whose segments start together (a
// rack loaded at once, a restart) then come due in their own share of FitEvery rather
// than all in the same second, where most would wait in the workers' queue. Later fits
// count from the last reading as always, so a bench that falls behind still fits each
// channel less often. Callers hold mu.
func (tr *Tracker) fitFrom() time.Time {
	every := tr.opt.FitEvery
	if tr.sched == nil || !tr.rephase || every <= 0 {
		return tr.last
	}
	tr.rephase = false
	n := time.Duration((tr.last.UnixNano() - int64(tr.phase)) % int64(every))
	if n < 0 {
		n += every
	}
	if n > every/2 { // the nearest grid point: the next fit comes ½ to 1½ FitEvery on
		n -= every
	}
	return tr.last.Add(-n)
}

// FitPending fits when the schedule called for a fit (FitEvery and MinNewPoints met)
// that the wall-clock gap (or a fit already running) held back, once it has passed;
// it reports whether it fitted here (a running Bench's workers fit it instead). A daemon calls it now and then so that readings that arrived inside the gap
// are not left unfitted until the next reading.
func (tr *Tracker) FitPending() bool {
	tr.mu.Lock()
	due := len(tr.pts) > 0 && !tr.queued && tr.due()
	if due && tr.sched != nil { // a running Bench's workers take it
		tr.queued = true
		tr.sched(tr)
		due = false
	}
	tr.mu.Unlock()
	if due {
		tr.fitNow()
	}
	return due
}

// busy reports whether a fit is queued or running.
func (tr *Tracker) busy() bool {
	tr.mu.Lock()
	defer tr.mu.Unlock()
	return tr.queued || tr.fitting
}

// newSegment drops the stored readings and the forecast and starts a segment at at.
func (tr *Tracker) newSegment(at time.Time) {
	tr.gen++
	tr.pts = tr.pts[:0]
	tr.start, tr.fitAt, tr.rephase = at, at, true
	tr.newPts = 0
	tr.forecast, tr.every = nil, 0 // a new specimen: the usual pace until it has a forecast
	tr.lead, tr.updated = 0, time.Time{}
}

// thin drops every other reading of the oldest half, keeping the first.
func (tr *Tracker) thin() {
	half := len(tr.pts) / 2
	kept := 0
	for i := 0; i < half; i += 2 {
		tr.pts[kept] = tr.pts[i]
		kept++
	}
	kept += copy(tr.pts[kept:], tr.pts[half:])
	tr.pts = tr.pts[:kept]
}

// Fit refits now, whatever the schedule, and returns the new forecast (nil before
// the first reading).
func (tr *Tracker) Fit() *Forecast {
	tr.fitNow()
	return tr.Forecast()
}

// Forecast returns a copy of the latest forecast, nil until the first fit of the
// current segment.
func (tr *Tracker) Forecast() *Forecast {
	tr.mu.Lock()
	defer tr.mu.Unlock()
	return tr.view()
}

// view is a copy of the forecast re-anchored to the latest readings (see anchor), with
// UpdatedAt the reading it reflects. Callers hold mu.
func (tr *Tracker) view() *Forecast {
	f := copyForecast(tr.forecast)
	if f == nil {
		return nil
	}
	if tr.updated.After(f.FittedAt) {
		return f.anchored(tr.lead, tr.updated)
	}
	f.UpdatedAt = f.FittedAt
	return f
}

// anchor re-anchors the forecast to the latest readings of its segment: the lead by
// which they are ahead of its curve (anchorLead), taken at the newest reading. A
// forecast with no predicted target has nothing to move; when the curve cannot place
// the readings (flat, or never at their temperature) the last anchor stands. Callers
// hold mu.
func (tr *Tracker) anchor() {
	f := tr.forecast
	if tr.hold || f == nil || f.Empty || f.Curve == nil || len(tr.pts) == 0 ||
		!slices.ContainsFunc(f.Targets, func(tf TargetForecast) bool { return tf.State == StatePredicted }) {
		return
	}
	var times []time.Time
	var celsius []float64
	for i := max(0, len(tr.pts)-anchorWindow); i < len(tr.pts); i++ {
		if at := tr.start.Add(seconds(tr.pts[i].t)); !at.Before(f.SegmentStart) {
			times, celsius = append(times, at), append(celsius, tr.pts[i].celsius)
		}
	}
	if len(times) == 0 {
		return
	}
	now := times[len(times)-1]
	if lead, ok := anchorLead(f.Curve, times, celsius, max(minLeadBound, now.Sub(f.SegmentStart).Seconds())); ok {
		tr.lead, tr.updated = lead, now
		tr.every = fitInterval(tr.view(), now, tr.opt.FitEvery)
	}
}

// minLeadBound, s, is the least bound on a lead (anchorLead's maxLead); beyond it the
// bound is the segment's age: readings a whole segment ahead of or behind the fit are
// not a phase to follow but a fit to redo.
const minLeadBound = 60

// fitJob is what one fit needs, copied from the tracker under its lock.
type fitJob struct {
	all     LumpedProblem
	start   time.Time
	targets []Target
	opt     TrackerOptions
	placed  bool
	gen     uint64
}

// fitNow fits the segment as it stands and stores the forecast, unless a fit is
// already running or the segment changed meanwhile. The tracker's lock is held only
// to copy the segment and to store the result.
func (tr *Tracker) fitNow() {
	tr.mu.Lock()
	if tr.fitting || len(tr.pts) == 0 {
		tr.queued = false
		tr.mu.Unlock()
		return
	}
	job := fitJob{all: tr.problem(), start: tr.start, targets: tr.targets, opt: tr.opt, placed: tr.placed, gen: tr.gen}
	tr.fitAt, tr.newPts, tr.fitWall = tr.fitFrom(), 0, time.Now()
	tr.fitting, tr.queued = true, false
	tr.mu.Unlock()

	began := time.Now()
	f := job.run()
	tr.stats.add(time.Since(began))

	tr.mu.Lock()
	if job.gen == tr.gen {
		tr.forecast, tr.every = f, fitInterval(f, tr.last, tr.opt.FitEvery)
		tr.lead, tr.updated = 0, time.Time{}
		tr.anchor() // to the readings that came while it ran
	}
	tr.fitting = false
	tr.mu.Unlock()
}

// The schedule follows the forecast: a channel whose next target is far away is
// refitted less often, one close to a target more often, so the fits go where a
// fresh forecast matters (and a thousand channels' fits fit in a core). Between fits
// the forecast is re-anchored to each reading (anchor), and the pace follows the
// re-anchored forecast: a specimen that turns out nearer its target than fitted is
// refitted at the nearer pace from the reading that shows it.
const (
	nearTarget = 5 * time.Minute  // a target due sooner is near: FitEvery/2
	farTarget  = 20 * time.Minute // no target due sooner is far: farFactor × FitEvery
	farFactor  = 3
	// A segment younger than learnSpan whose fit predicts no target yet (every pending
	// target insufficient) is refitted at FitEvery/2: nothing can be re-anchored until
	// a fit predicts, so the first forecast comes sooner, and a curve the engine cannot
	// read does not keep the quicker pace for good.
	learnSpan = 10 * time.Minute
)

// fitInterval returns the reading time until the next fit after forecast f, whose
// last reading was at last: FitEvery/2 while a pending target's predicted crossing
// is within nearTarget, farFactor × FitEvery while every pending target's predicted
// crossing (for an open-ended interval without one, its opening) is beyond farTarget
// and no interval opens within nearTarget, FitEvery/2 while learning (every pending
// target insufficient, in the segment's first learnSpan), and FitEvery
// otherwise — always FitEvery while there is no forecast, the position is empty, or
// any target is reached or holding (a state the readings may take back, which must
// not stand longer than it does today). A wide interval no longer keeps the usual pace
// by itself: re-anchoring keeps a far forecast's timing current between fits, and on
// the benchmark a forecast re-anchored 30 s after its fit is no worse than the fit and,
// from 25 % of the way to the crossing, about as good as a refit (TestReanchorAccuracy).
func fitInterval(f *Forecast, last time.Time, every time.Duration) time.Duration {
	if f == nil || f.Empty || len(f.Targets) == 0 {
		return every
	}
	const never = time.Duration(math.MaxInt64)
	// The soonest predicted crossing, interval opening, and crossing or (an open-ended
	// interval without a central estimate) opening.
	at, earliest, soonest := never, never, never
	learning := last.Sub(f.SegmentStart) < learnSpan
	for _, tf := range f.Targets {
		switch tf.State {
		case StateReached, StateHolding:
			return every
		case StateInsufficient:
			continue
		case StatePredicted:
			earliest = min(earliest, tf.Earliest.Sub(last))
			if tf.At.IsZero() { // an open-ended interval without a central estimate
				soonest = min(soonest, tf.Earliest.Sub(last))
				continue
			}
			at = min(at, tf.At.Sub(last))
			soonest = min(soonest, tf.At.Sub(last))
		}
		learning = false // a state decided or predicted: not learning
	}
	switch {
	case at <= nearTarget, learning:
		return every / 2
	case soonest > farTarget && soonest != never && earliest > nearTarget:
		return farFactor * every
	}
	return every
}

// run is Analyze on the job's segment (or the empty-position forecast).
func (job fitJob) run() *Forecast {
	p, onset, _ := Prepare(job.all.Times, job.all.Celsius, job.all.Ambient)
	if len(p.Times) == 0 {
		return nil
	}
	if !job.placed && !occupied(job.all) {
		return emptyForecast(job.all, job.start, job.targets)
	}
	return Analyze(p, job.start.Add(seconds(onset)), job.targets, AnalyzeOptions{
		Specimen: job.opt.Specimen, Fit: job.opt.Fit, Interval: job.opt.Interval,
	})
}

// occupyMargin, °C: a position whose readings have moved by more than this within
// the segment, or lie this far from the measured ambient, holds a specimen.
const occupyMargin = 3.0

// occupied reports whether the segment's readings show a specimen: they have moved by
// more than occupyMargin (running median, so noise and spikes do not count), or the
// latest lies more than occupyMargin from the measured ambient, or, with no ambient
// measured, more than priorFar from the room prior. A position that has read the
// room all along does not.
func occupied(p LumpedProblem) bool {
	n := len(p.Celsius)
	if n == 0 {
		return false
	}
	m := runningMedian(p.Celsius)
	lo, hi := slices.Min(m), slices.Max(m)
	last := m[n-1]
	switch {
	case hi-lo > occupyMargin:
		return true
	case p.Ambient != nil:
		return math.Abs(last-p.Ambient[n-1]) > occupyMargin
	default:
		return math.Abs(last-roomPrior) > priorFar
	}
}

// emptyForecast is the forecast of a position with no specimen: nothing fitted, every
// target StateEmpty.
func emptyForecast(p LumpedProblem, start time.Time, targets []Target) *Forecast {
	n := len(p.Times)
	f := &Forecast{
		Empty: true, Ambient: math.NaN(), RMSE: math.NaN(), Biot: math.NaN(), Points: n,
		SegmentStart: start, FittedAt: start.Add(seconds(p.Times[n-1])),
		Notes: []string{fmt.Sprintf(
			"No specimen on this position: no run is active and the readings have stayed within %.0f °C of the room, so nothing is fitted and no target is forecast until a specimen is placed.",
			occupyMargin)},
	}
	for _, tg := range targets {
		f.Targets = append(f.Targets, TargetForecast{Target: tg, Celsius: tg.Celsius, State: StateEmpty})
	}
	return f
}

// problem builds the fit problem from the stored readings. Readings stored before the
// first ambient reading take the first measured ambient after them; without any, the
// ambient is fitted.
func (tr *Tracker) problem() LumpedProblem {
	n := len(tr.pts)
	p := LumpedProblem{Times: make([]float64, n), Celsius: make([]float64, n)}
	for i, pt := range tr.pts {
		p.Times[i], p.Celsius[i] = pt.t, pt.celsius
	}
	if math.IsNaN(tr.amb) {
		return p
	}
	p.Ambient = make([]float64, n)
	next := tr.amb
	for i := n - 1; i >= 0; i-- {
		if a := tr.pts[i].ambient; !math.IsNaN(a) {
			next = a
		}
		p.Ambient[i] = next
	}
	return p
}

// measuredNaN reports a measured ambient's standard error as NaN: it was not estimated.
func measuredNaN(se float64, measured bool) float64 {
	if measured {
		return math.NaN()
	}
	return se
}

// copyForecast returns a copy of f whose slices the caller may keep (nil for nil).
func copyForecast(f *Forecast) *Forecast {
	if f == nil {
		return nil
	}
	c := *f
	c.Params = append([]Param(nil), f.Params...)
	c.Notes = append([]string(nil), f.Notes...)
	c.Targets = append([]TargetForecast(nil), f.Targets...)
	return &c
}
