package exporter

import (
	"fmt"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/internal/jsonval"
)

// DefaultStaleAfter is the shortest silence after which a channel is reported stale.
// A channel that reports slowly gets more: five of its usual gaps between readings.
const DefaultStaleAfter = 30 * time.Second

// The fault kinds a channel can be in, besides the reading statuses ("open", "range",
// "unparsable", "spike", "stuck", "clock").
const (
	// FaultPortDown: the serial port of the channel's logger is not open.
	FaultPortDown = "port_down"
	// FaultStale: no reading has arrived for longer than the stale limit.
	FaultStale = "stale"
)

// FaultJSON is a channel's current fault. Kind is "port_down", "stale" or the status
// of the newest reading ("open" for an open thermocouple, "range", ...).
type FaultJSON struct {
	Kind   string     `json:"kind"`
	Since  *time.Time `json:"since"`
	Detail string     `json:"detail"`
}

// channelFault returns the current fault of channel at wall time now, or nil. A lost
// port outranks silence, and silence outranks a fault reading.
func channelFault(s State, channel string, now time.Time) *FaultJSON {
	if s.Latest == nil {
		return nil
	}
	rc, ok := s.Latest.Reception(channel)
	if !ok {
		// Never read: a logger whose port failed (a wrong port at start-up, an
		// adapter not plugged in) is the reason, and says so.
		if p, down := portDown(s, s.LoggerOf[channel]); down {
			return &FaultJSON{Kind: FaultPortDown,
				Detail: fmt.Sprintf("logger %s: port %s is not open, and no reading has arrived yet; settle keeps retrying", p.Logger, p.Port)}
		}
		return nil
	}
	if p, down := portDown(s, rc.Logger); down {
		return &FaultJSON{Kind: FaultPortDown, Since: jsonval.Time(rc.Received),
			Detail: fmt.Sprintf("logger %s: port %s is not open; settle keeps retrying", p.Logger, p.Port)}
	}
	limit := staleLimit(s.StaleAfter, rc.MeanGap)
	if age := now.Sub(rc.Received); age > limit {
		return &FaultJSON{Kind: FaultStale, Since: jsonval.Time(rc.Received),
			Detail: fmt.Sprintf("no reading for %s (limit %s)", age.Round(time.Second), limit.Round(time.Second))}
	}
	r, _ := s.Latest.Get(channel)
	if r.OK() {
		return nil
	}
	detail := fmt.Sprintf("latest reading is %s", r.Status)
	switch r.Status {
	case daq.StatusOpen:
		detail = "open thermocouple: check the wire and the connector"
	case daq.StatusClock:
		detail = "reading time far ahead of the host's clock or of the channel's previous readings: check the logger's clock"
	}
	if r.Raw != "" {
		detail += fmt.Sprintf(" (logger sent %q)", r.Raw)
	}
	return &FaultJSON{Kind: r.Status.String(), Since: jsonval.Time(rc.FaultSince), Detail: detail}
}

// staleLimit is the silence after which a channel is stale: min, or five mean gaps.
func staleLimit(min, meanGap time.Duration) time.Duration {
	if min <= 0 {
		min = DefaultStaleAfter
	}
	return max(min, 5*meanGap)
}

// portDown reports whether logger's port is known and has failed (not merely not open
// yet, as at start-up or during a reload).
func portDown(s State, logger string) (daq.PortStats, bool) {
	if s.Ports == nil || logger == "" {
		return daq.PortStats{}, false
	}
	for _, p := range s.Ports() {
		if p.Logger == logger {
			return p, p.Failed && !p.Up
		}
	}
	return daq.PortStats{}, false
}

// portsOnce returns s whose Ports answers one snapshot taken now: a view of every
// channel (the API, the event stream's poll) then reads the ports once, not once per
// channel (a thousand channels on 125 loggers made 125,000 port snapshots a poll).
func portsOnce(s State) State {
	if s.Ports == nil {
		return s
	}
	ports := s.Ports()
	s.Ports = func() []daq.PortStats { return ports }
	return s
}
