package clean

import (
	"cmp"
	"math"
	"slices"
	"strconv"
	"sync"

	"github.com/settle-lab/settle/daq"
)

// Defaults for the zero values of Options.
const (
	// DefaultSpikeWindow is the Hampel window length in readings.
	DefaultSpikeWindow = 7
	// DefaultSpikeSigmas is the Hampel threshold: 3 robust standard deviations, the
	// usual choice for the Hampel identifier (common practice).
	DefaultSpikeSigmas = 3.0
	// DefaultSpikeMinCelsius is the smallest deviation called a spike.
	DefaultSpikeMinCelsius = 0.5
	// DefaultMinCelsius is absolute zero (SI definition of the degree Celsius; from
	// memory).
	DefaultMinCelsius = -273.15
	// DefaultMaxCelsius is above the highest thermocouple range, type B's 1820 °C
	// (NIST Monograph 175, via shared/reference/reference-values.md, type B rows).
	DefaultMaxCelsius = 2000.0
)

// madScale turns a median absolute deviation into a standard deviation for normal
// noise: 1/Φ⁻¹(3/4) ≈ 1.4826 (Rousseeuw and Croux, JASA 1993; from memory).
const madScale = 1.4826

// Options tune one logger's checks: its clean section of the configuration (config
// embeds it). The zero value means the defaults.
type Options struct {
	// SpikeWindow is the Hampel window length in readings, odd (default 7; 1 turns
	// the spike check off). Readings leave the cleaner (SpikeWindow−1)/2 readings late.
	SpikeWindow int `mapstructure:"spike_window"`
	// SpikeSigmas is the Hampel threshold in robust standard deviations (default 3).
	SpikeSigmas float64 `mapstructure:"spike_sigmas"`
	// SpikeMinCelsius is the smallest deviation ever called a spike (default 0.5 °C),
	// so that a quiet, quantised signal is not flagged on every step.
	SpikeMinCelsius float64 `mapstructure:"spike_min_celsius"`
	// StuckCount flags a reading as stuck when it is the N-th identical value in a row
	// (default 0: off; set it where noise is expected in the last digit).
	StuckCount int `mapstructure:"stuck_count"`
	// MinCelsius and MaxCelsius bound a plausible reading; outside is out of range
	// (defaults −273.15 and 2000).
	MinCelsius *float64 `mapstructure:"min_celsius"`
	MaxCelsius *float64 `mapstructure:"max_celsius"`
}

// Check reports what is wrong with o, found at key (e.g. "loggers[0].clean").
func (o Options) Check(c daq.Checker, key string) {
	if o.SpikeWindow < 0 || (o.SpikeWindow > 0 && o.SpikeWindow%2 == 0) || o.SpikeWindow > 101 {
		c.Add(key+".spike_window", "must be odd, 1–101 (1: off; absent: 7), got %d", o.SpikeWindow)
	}
	if o.SpikeSigmas < 0 {
		c.Add(key+".spike_sigmas", "must not be negative (absent: 3), got %g", o.SpikeSigmas)
	}
	if o.SpikeMinCelsius < 0 {
		c.Add(key+".spike_min_celsius", "must not be negative (absent: 0.5), got %g", o.SpikeMinCelsius)
	}
	if o.StuckCount < 0 || o.StuckCount == 1 {
		c.Add(key+".stuck_count", "must be 0 (off) or ≥ 2, got %d", o.StuckCount)
	}
	if o.MinCelsius != nil && o.MaxCelsius != nil && *o.MinCelsius >= *o.MaxCelsius {
		c.Add(key, "min_celsius (%g) must be less than max_celsius (%g)", *o.MinCelsius, *o.MaxCelsius)
	}
}

// settings are Options with defaults filled in.
type settings struct {
	half          int // (window−1)/2
	sigmas, floor float64
	stuck         int
	lo, hi        float64
}

func (o Options) settings() settings {
	w := cmp.Or(o.SpikeWindow, DefaultSpikeWindow)
	s := settings{half: max(w-1, 0) / 2, sigmas: cmp.Or(o.SpikeSigmas, DefaultSpikeSigmas),
		floor: cmp.Or(o.SpikeMinCelsius, DefaultSpikeMinCelsius), stuck: o.StuckCount,
		lo: DefaultMinCelsius, hi: DefaultMaxCelsius}
	if o.MinCelsius != nil {
		s.lo = *o.MinCelsius
	}
	if o.MaxCelsius != nil {
		s.hi = *o.MaxCelsius
	}
	return s
}

// key names one channel of one logger.
type key struct{ logger, channel string }

// Cleaner holds each channel's recent readings. Its methods are safe for concurrent
// use, though one goroutine normally calls Apply.
type Cleaner struct {
	mu       sync.Mutex
	def      settings
	byLogger map[string]settings
	chans    map[key]*channel
	counts   map[key]*[statusCount]uint64
	out      []daq.Reading
	scratch  []float64
}

// statusCount bounds the statuses counted (daq.StatusClock is the last one).
const statusCount = int(daq.StatusClock) + 1

// New returns a cleaner with each logger's options, by logger name; readings of a
// logger not in byLogger get the defaults.
func New(byLogger map[string]Options) *Cleaner {
	c := NewWithOptions(Options{})
	for name, o := range byLogger {
		c.byLogger[name] = o.settings()
	}
	return c
}

// NewWithOptions returns a cleaner that applies o to every channel.
func NewWithOptions(o Options) *Cleaner {
	return &Cleaner{def: o.settings(), byLogger: map[string]settings{}, chans: map[key]*channel{},
		counts: map[key]*[statusCount]uint64{}}
}

// Apply takes one reading and returns the readings now ready, in order per channel:
// usually the reading from (SpikeWindow−1)/2 readings ago of the same channel, with
// its status settled. The returned slice is reused by the next call to Apply or Flush;
// use or copy it before then.
func (c *Cleaner) Apply(r daq.Reading) []daq.Reading {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.out = c.out[:0]
	k := key{r.Logger, r.Channel}
	ch := c.chans[k]
	if ch == nil {
		s, ok := c.byLogger[r.Logger]
		if !ok {
			s = c.def
		}
		ch = &channel{s: s}
		c.chans[k] = ch
	}
	r = ch.s.screen(r)
	ch.pending = append(ch.pending, r)
	c.release(k, ch, false)
	return c.out
}

// Screen returns r with the checks that need no neighbours applied: a value outside
// the logger's plausible range becomes daq.StatusRange. Apply does the same, so a
// reading may be screened first (to journal it at once) and applied later.
func (c *Cleaner) Screen(r daq.Reading) daq.Reading {
	c.mu.Lock()
	defer c.mu.Unlock()
	s, ok := c.byLogger[r.Logger]
	if !ok {
		s = c.def
	}
	return s.screen(r)
}

func (s settings) screen(r daq.Reading) daq.Reading {
	if r.OK() && (r.Celsius < s.lo || r.Celsius > s.hi) {
		r.Status, r.Raw = daq.StatusRange, fmtFloat(r.Celsius)
	}
	return r
}

// Flush returns every reading still held, judged with the window it has, and
// empties the cleaner's queues (channel history is kept). Call it at shutdown.
func (c *Cleaner) Flush() []daq.Reading {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.out = c.out[:0]
	keys := make([]key, 0, len(c.chans))
	for k := range c.chans {
		keys = append(keys, k)
	}
	slices.SortFunc(keys, func(a, b key) int { return cmp.Or(cmp.Compare(a.logger, b.logger), cmp.Compare(a.channel, b.channel)) })
	for _, k := range keys {
		c.release(k, c.chans[k], true)
	}
	return c.out
}

// Count is the number of readings of one channel with one fault status.
type Count struct {
	Logger, Channel string
	Status          daq.Status
	N               uint64
}

// Counts returns the faults counted so far per channel and status (statuses other
// than ok), sorted by logger, channel and status.
func (c *Cleaner) Counts() []Count {
	c.mu.Lock()
	defer c.mu.Unlock()
	var out []Count
	for k, n := range c.counts {
		for st, v := range n {
			if v > 0 && daq.Status(st) != daq.StatusOK {
				out = append(out, Count{k.logger, k.channel, daq.Status(st), v})
			}
		}
	}
	slices.SortFunc(out, func(a, b Count) int {
		return cmp.Or(cmp.Compare(a.Logger, b.Logger), cmp.Compare(a.Channel, b.Channel), cmp.Compare(a.Status, b.Status))
	})
	return out
}

// release emits the channel's pending readings that can be judged (all of them when
// final).
func (c *Cleaner) release(k key, ch *channel, final bool) {
	for len(ch.pending) > 0 {
		head := ch.pending[0]
		if head.OK() {
			ahead := ch.okAhead(ch.s.half)
			if len(ahead) < ch.s.half && !final {
				return
			}
			c.judge(ch, &head, ahead)
		}
		ch.pending = ch.pending[1:]
		ch.stuckCheck(&head)
		c.emit(k, head)
	}
}

// judge applies the Hampel identifier to r with the channel's history and the OK
// values ahead of it, then adds r's value to the history.
func (c *Cleaner) judge(ch *channel, r *daq.Reading, ahead []float64) {
	w := append(append(append(c.scratch[:0], ch.hist...), r.Celsius), ahead...)
	c.scratch = w
	if ch.s.half > 0 && len(w) >= 3 {
		med := median(w)
		dev := make([]float64, 0, 2*ch.s.half+1)
		for _, v := range w {
			dev = append(dev, math.Abs(v-med))
		}
		limit := max(ch.s.sigmas*madScale*median(dev), ch.s.floor)
		if math.Abs(r.Celsius-med) > limit {
			r.Status, r.Raw = daq.StatusSpike, fmtFloat(r.Celsius)
		}
	}
	ch.hist = append(ch.hist, r.Celsius)
	if len(ch.hist) > ch.s.half {
		ch.hist = ch.hist[1:]
	}
}

func (c *Cleaner) emit(k key, r daq.Reading) {
	n := c.counts[k]
	if n == nil {
		n = new([statusCount]uint64)
		c.counts[k] = n
	}
	if int(r.Status) < statusCount {
		n[r.Status]++
	}
	c.out = append(c.out, r)
}

// channel is one channel's state.
type channel struct {
	s       settings
	pending []daq.Reading // not yet emitted, in arrival order
	hist    []float64     // the last half OK values emitted (raw values)
	last    float64       // last OK value emitted, for the stuck check
	run     int           // how many times in a row last was seen
}

// okAhead returns the values of up to n OK readings after the head of pending.
func (ch *channel) okAhead(n int) []float64 {
	var out []float64
	for _, r := range ch.pending[1:] {
		if len(out) == n {
			break
		}
		if r.OK() {
			out = append(out, r.Celsius)
		}
	}
	return out
}

// stuckCheck counts identical OK values and flags the StuckCount-th and later.
func (ch *channel) stuckCheck(r *daq.Reading) {
	if !r.OK() {
		return
	}
	if ch.run > 0 && r.Celsius == ch.last {
		ch.run++
	} else {
		ch.last, ch.run = r.Celsius, 1
	}
	if ch.s.stuck > 0 && ch.run >= ch.s.stuck {
		r.Status, r.Raw = daq.StatusStuck, fmtFloat(r.Celsius)
	}
}

// median sorts a copy of v and returns its median.
func median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

func fmtFloat(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
