package exporter

import (
	"sort"
	"sync"
	"time"

	"github.com/settle-lab/settle/daq"
)

// Latest keeps the newest reading of every channel and counts faults per channel and
// status. It is safe for concurrent use: the acquisition loop records, scrapes and API
// requests read copies.
type Latest struct {
	mu       sync.Mutex
	readings map[string]daq.Reading
	faults   map[faultKey]uint64
}

type faultKey struct {
	channel string
	status  daq.Status
}

// NewLatest returns an empty table.
func NewLatest() *Latest {
	return &Latest{readings: map[string]daq.Reading{}, faults: map[faultKey]uint64{}}
}

// Record stores r as its channel's newest reading and counts it if it is a fault.
func (l *Latest) Record(r daq.Reading) {
	l.mu.Lock()
	defer l.mu.Unlock()
	l.readings[r.Channel] = r
	if !r.OK() {
		l.faults[faultKey{r.Channel, r.Status}]++
	}
}

// Get returns the newest reading of channel, if any.
func (l *Latest) Get(channel string) (daq.Reading, bool) {
	l.mu.Lock()
	defer l.mu.Unlock()
	r, ok := l.readings[channel]
	return r, ok
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
