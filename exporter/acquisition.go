package exporter

import (
	"sort"
	"sync"
	"time"

	"github.com/settle-lab/settle/daq"
)

// DefaultHistory is how many readings Latest keeps per channel for the plots and the
// series API. When a channel's history is full, the older half is thinned to every
// second reading, so a long run keeps its whole span at a coarser step while recent
// readings stay at full resolution. The journal, not the exporter, is the record.
const DefaultHistory = 8192

// Latest keeps the newest reading of every channel, a bounded history of recent
// readings, the wall-clock time each channel last reported, and fault counts per
// channel and status. It is safe for concurrent use: the acquisition loop records,
// scrapes and API requests read copies.
type Latest struct {
	mu       sync.Mutex
	readings map[string]daq.Reading
	faults   map[faultKey]uint64
	hist     map[string]*history
	capacity int
	now      func() time.Time
	subs     map[int]func(daq.Reading)
	nextSub  int
}

type faultKey struct {
	channel string
	status  daq.Status
}

// history is one channel's recent readings and reception timing.
type history struct {
	pts        []Point
	received   time.Time     // wall clock of the newest reading
	meanGap    time.Duration // running mean of the wall-clock gap between readings
	faultSince time.Time     // reading time of the first fault of the current streak
}

// Point is one reading in a channel's history.
type Point struct {
	// Time is the reading's time.
	Time time.Time
	// Celsius is the temperature; meaningless unless Status is daq.StatusOK.
	Celsius float64
	// Status is the reading's status.
	Status daq.Status
}

// NewLatest returns an empty table keeping DefaultHistory readings per channel.
func NewLatest() *Latest {
	return &Latest{
		readings: map[string]daq.Reading{}, faults: map[faultKey]uint64{},
		hist: map[string]*history{}, capacity: DefaultHistory, now: time.Now,
		subs: map[int]func(daq.Reading){},
	}
}

// Record stores r as its channel's newest reading, appends it to the channel's history,
// counts it if it is a fault and passes it to the subscribers (the event stream).
func (l *Latest) Record(r daq.Reading) {
	l.mu.Lock()
	defer l.mu.Unlock()
	l.readings[r.Channel] = r
	if !r.OK() {
		l.faults[faultKey{r.Channel, r.Status}]++
	}
	h := l.hist[r.Channel]
	if h == nil {
		h = &history{}
		l.hist[r.Channel] = h
	}
	h.add(Point{Time: r.Time, Celsius: r.Celsius, Status: r.Status}, l.capacity)
	now := l.now()
	if !h.received.IsZero() {
		gap := now.Sub(h.received)
		h.meanGap += (gap - h.meanGap) / 8 // an exponential mean over about 8 readings
	}
	h.received = now
	switch {
	case r.OK():
		h.faultSince = time.Time{}
	case h.faultSince.IsZero():
		h.faultSince = r.Time
	}
	for _, fn := range l.subs {
		fn(r)
	}
}

// add appends p, thinning the older half first when the history is full.
func (h *history) add(p Point, capacity int) {
	if capacity < 4 {
		capacity = 4
	}
	if len(h.pts) >= capacity {
		half := len(h.pts) / 2
		kept := h.pts[:0]
		for i := 0; i < half; i += 2 {
			kept = append(kept, h.pts[i])
		}
		kept = append(kept, h.pts[half:]...)
		clear(h.pts[len(kept):])
		h.pts = kept
	}
	h.pts = append(h.pts, p)
}

// subscribe calls fn with every reading recorded from now on, under the table's lock
// (fn must not block and must not call back into l). cancel stops the calls.
func (l *Latest) subscribe(fn func(daq.Reading)) (cancel func()) {
	l.mu.Lock()
	defer l.mu.Unlock()
	id := l.nextSub
	l.nextSub++
	l.subs[id] = fn
	return func() {
		l.mu.Lock()
		delete(l.subs, id)
		l.mu.Unlock()
	}
}

// Get returns the newest reading of channel, if any.
func (l *Latest) Get(channel string) (daq.Reading, bool) {
	l.mu.Lock()
	defer l.mu.Unlock()
	r, ok := l.readings[channel]
	return r, ok
}

// History returns a copy of channel's kept readings with from ≤ Time ≤ to, oldest
// first. A zero from or to leaves that end open.
func (l *Latest) History(channel string, from, to time.Time) []Point {
	l.mu.Lock()
	defer l.mu.Unlock()
	h := l.hist[channel]
	if h == nil {
		return nil
	}
	lo, hi := 0, len(h.pts)
	if !from.IsZero() {
		lo = sort.Search(len(h.pts), func(i int) bool { return !h.pts[i].Time.Before(from) })
	}
	if !to.IsZero() {
		hi = sort.Search(len(h.pts), func(i int) bool { return h.pts[i].Time.After(to) })
	}
	if lo >= hi {
		return nil
	}
	return append([]Point(nil), h.pts[lo:hi]...)
}

// Reception is how a channel has been reporting, for fault and staleness checks.
type Reception struct {
	// Logger is the logger of the newest reading.
	Logger string
	// Received is the wall-clock time the newest reading arrived.
	Received time.Time
	// MeanGap is the running mean of the wall-clock gap between readings.
	MeanGap time.Duration
	// FaultSince is the time of the first fault reading of the current streak of
	// faults, or zero when the newest reading is valid.
	FaultSince time.Time
	// Kept is how many readings the history holds.
	Kept int
}

// Reception returns how channel has been reporting; false before its first reading.
func (l *Latest) Reception(channel string) (Reception, bool) {
	l.mu.Lock()
	defer l.mu.Unlock()
	h := l.hist[channel]
	if h == nil {
		return Reception{}, false
	}
	return Reception{Logger: l.readings[channel].Logger, Received: h.received,
		MeanGap: h.meanGap, FaultSince: h.faultSince, Kept: len(h.pts)}, true
}

// FaultCount is the number of fault readings of one status on one channel.
type FaultCount struct {
	Channel string
	Status  daq.Status
	Count   uint64
}

// Faults returns the fault counters sorted by channel and status.
func (l *Latest) Faults() []FaultCount {
	l.mu.Lock()
	out := make([]FaultCount, 0, len(l.faults))
	for k, n := range l.faults {
		out = append(out, FaultCount{k.channel, k.status, n})
	}
	l.mu.Unlock()
	sort.Slice(out, func(i, j int) bool {
		if out[i].Channel != out[j].Channel {
			return out[i].Channel < out[j].Channel
		}
		return out[i].Status < out[j].Status
	})
	return out
}

// unixSeconds converts t to fractional Unix seconds for a _timestamp_seconds gauge.
func unixSeconds(t time.Time) float64 { return float64(t.UnixNano()) / 1e9 }
