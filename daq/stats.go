package daq

import (
	"sync"
	"time"
)

// PortStats is a snapshot of one source's port counters, for metrics and the status page.
type PortStats struct {
	// Logger is the logger name (config `loggers[].name`).
	Logger string
	// Port is the configured device path.
	Port string
	// Up is true while the port is open.
	Up bool
	// Failed is true from a failed open or read until the port is open again. A port
	// that is merely not open yet (start-up, a reload) is not Up but not Failed either.
	Failed bool
	// Reconnects counts attempts to reopen the port after it was lost or failed to open
	// (every open after the first), so it grows while a cable is out.
	Reconnects uint64
	// ReadErrors counts failed opens and failed reads of the port.
	ReadErrors uint64
	// ParseErrors counts lines that gave no readings: too few fields, an unreadable
	// clock, or longer than MaxLineBytes.
	ParseErrors uint64
	// LastReading is the host time at which the last line with readings arrived (zero
	// before the first one).
	LastReading time.Time
}

// StatsReporter is implemented by sources that keep port counters.
type StatsReporter interface {
	// Stats returns a snapshot of the counters; it is safe for concurrent use.
	Stats() PortStats
}

// portStatus holds PortStats behind a mutex: the reading goroutine writes, scrapes read.
type portStatus struct {
	mu sync.Mutex
	s  PortStats
}

func (p *portStatus) snapshot() PortStats {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.s
}

func (p *portStatus) update(f func(*PortStats)) {
	p.mu.Lock()
	f(&p.s)
	p.mu.Unlock()
}

func (p *portStatus) reconnect() { p.update(func(s *PortStats) { s.Reconnects++ }) }

func (p *portStatus) setUp(up bool) {
	p.update(func(s *PortStats) {
		s.Up = up
		if up {
			s.Failed = false
		}
	})
}

func (p *portStatus) readError() {
	p.update(func(s *PortStats) {
		s.ReadErrors++
		s.Failed = true
	})
}
func (p *portStatus) parseErrors(n uint64)    { p.update(func(s *PortStats) { s.ParseErrors += n }) }
func (p *portStatus) lastReading(t time.Time) { p.update(func(s *PortStats) { s.LastReading = t }) }
