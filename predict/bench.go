package predict

import (
	"sync/atomic"
	"time"
)

// ChannelSpec describes one channel of a bench: its name, the channel that measures
// its ambient (empty: the ambient is fitted) and its targets.
type ChannelSpec struct {
	Name, Ambient string
	// Role is RoleAmbient for a sensor of the room's air; empty or RolePosition for a
	// specimen position. A channel named as another's Ambient is an ambient sensor
	// whatever its Role says.
	Role    string
	Targets []Target
	// Specimen, when non-nil, describes this channel's specimen and overrides the
	// TrackerOptions.Specimen given to NewBench.
	Specimen *Specimen
}

// Channel roles.
const (
	// RolePosition is a specimen position: fitted and forecast.
	RolePosition = "position"
	// RoleAmbient is a sensor of the room's air: shown as the room, never fitted or
	// forecast, never ready.
	RoleAmbient = "ambient"
)

// ChannelState is a snapshot of one channel of a bench.
type ChannelState struct {
	// Name and Ambient are as in the ChannelSpec.
	Name, Ambient string
	// Role is RolePosition or RoleAmbient.
	Role string
	// LastTime and LastCelsius are the latest reading (zero time and NaN before any).
	LastTime    time.Time
	LastCelsius float64
	// Readings counts the readings observed.
	Readings int
	// Forecast is a copy of the latest forecast, nil until the first fit of the
	// current segment.
	Forecast *Forecast
}

// Bench holds the trackers of a rack's channels. It is safe for concurrent use: the
// channel table is fixed at construction and each tracker has its own lock.
type Bench struct {
	specs    []ChannelSpec
	trackers []*Tracker
	index    map[string]int
	users    map[string][]int // ambient channel → channels measuring their ambient on it
	roles    []string
	stats    fitStats
}

// fitStats counts a bench's fits and the time they took.
type fitStats struct {
	fits  atomic.Uint64
	nanos atomic.Int64
}

func (s *fitStats) add(d time.Duration) {
	if s != nil {
		s.fits.Add(1)
		s.nanos.Add(int64(d))
	}
}

// FitStats returns how many fits the bench's trackers have run and the time they took
// in all (wall-clock, summed over the fits): the schedule's cost, to size a machine.
func (b *Bench) FitStats() (fits uint64, took time.Duration) {
	return b.stats.fits.Load(), time.Duration(b.stats.nanos.Load())
}

// NewBench returns a bench with one tracker per spec. A later spec with a name already
// used is ignored. config.ChannelSpecs builds the specs from a configuration.
func NewBench(specs []ChannelSpec, opt TrackerOptions) *Bench {
	b := &Bench{index: map[string]int{}, users: map[string][]int{}}
	for _, s := range specs {
		if _, dup := b.index[s.Name]; dup {
			continue
		}
		b.index[s.Name] = len(b.specs)
		b.specs = append(b.specs, s)
		o := opt
		if s.Specimen != nil {
			o.Specimen = s.Specimen
		}
		tr := NewTracker(s.Targets, o)
		tr.stats = &b.stats
		b.trackers = append(b.trackers, tr)
	}
	for i, s := range b.specs {
		if s.Ambient != "" {
			b.users[s.Ambient] = append(b.users[s.Ambient], i)
		}
	}
	for _, s := range b.specs {
		role := RolePosition
		if s.Role == RoleAmbient || len(b.users[s.Name]) > 0 {
			role = RoleAmbient
		}
		b.roles = append(b.roles, role)
	}
	return b
}

// SetPlaced says whether a specimen is known to be on channel (a run is active there);
// see Tracker.SetPlaced. Unknown channels are ignored.
func (b *Bench) SetPlaced(channel string, placed bool) {
	if i, ok := b.index[channel]; ok {
		b.trackers[i].SetPlaced(placed)
	}
}

// Observe records an OK reading of a channel; readings of unknown channels are
// ignored. A reading of a channel named as another's Ambient becomes that channel's
// measured ambient.
func (b *Bench) Observe(channel string, t time.Time, celsius float64) {
	for _, i := range b.users[channel] {
		b.trackers[i].SetAmbient(celsius)
	}
	i, ok := b.index[channel]
	switch {
	case !ok:
	case b.roles[i] == RoleAmbient:
		b.trackers[i].observeOnly(t, celsius)
	default:
		b.trackers[i].Add(t, celsius)
	}
}

// Snapshot returns the state of every channel, in spec order, each forecast
// re-anchored to the readings since its fit (see Tracker). The results are copies.
func (b *Bench) Snapshot() []ChannelState { return b.snapshot(false) }

// SnapshotFitted is Snapshot with each forecast as its fit left it, not re-anchored:
// what a replay of the same readings reproduces, and so what a run's forecast
// history records.
func (b *Bench) SnapshotFitted() []ChannelState { return b.snapshot(true) }

func (b *Bench) snapshot(fitted bool) []ChannelState {
	out := make([]ChannelState, len(b.specs))
	for i, s := range b.specs {
		out[i] = b.trackers[i].state(fitted)
		out[i].Name, out[i].Ambient, out[i].Role = s.Name, s.Ambient, b.roles[i]
	}
	return out
}

// state returns the tracker's part of a ChannelState, its forecast as fitted or
// re-anchored.
func (tr *Tracker) state(fitted bool) ChannelState {
	tr.mu.Lock()
	defer tr.mu.Unlock()
	var f *Forecast
	if !fitted {
		f = tr.view()
	} else if f = copyForecast(tr.forecast); f != nil {
		f.UpdatedAt = f.FittedAt
	}
	return ChannelState{LastTime: tr.last, LastCelsius: tr.lastC, Readings: tr.readings, Forecast: f}
}
