package daq

import (
	"context"
	"time"
)

// Status says whether a Reading holds a usable temperature or which fault it records.
// A reading with a fault status is kept in the record and never reaches a fit.
type Status uint8

// The statuses a Reading can carry.
const (
	// StatusOK is a valid temperature.
	StatusOK Status = iota
	// StatusOpen is an open-circuit thermocouple (a rail value or a marker word).
	StatusOpen
	// StatusRange is a value outside the sensor's or the converter's range.
	StatusRange
	// StatusUnparsable is a field that could not be read as a number.
	StatusUnparsable
	// StatusSpike is a value the cleaner rejected as an isolated spike.
	StatusSpike
	// StatusStuck is a value the cleaner flagged as stuck (no change for too long).
	StatusStuck
	// StatusClock is a reading whose time jumps far ahead of the wall clock or of the
	// channel's previous readings (a garbled clock digit, a logger clock set years
	// ahead). It is kept in the record and never reaches a fit.
	StatusClock
)

var statusNames = [...]string{"ok", "open", "range", "unparsable", "spike", "stuck", "clock"}

// String returns the lower-case name used in logs, the journal and the API.
func (s Status) String() string {
	if int(s) < len(statusNames) {
		return statusNames[s]
	}
	return "unknown"
}

// ParseStatus is the inverse of Status.String; unknown names give false.
func ParseStatus(name string) (Status, bool) {
	for i, n := range statusNames {
		if n == name {
			return Status(i), true
		}
	}
	return 0, false
}

// Reading is one value of one channel at one instant.
type Reading struct {
	// Logger is the name of the logger (config `loggers[].name`) that produced it.
	Logger string
	// Channel is the channel name (config `channels[].name`).
	Channel string
	// Time is the logger's own clock when the logger sends one, else the host's
	// receive time.
	Time time.Time
	// Celsius is the temperature in degrees Celsius; meaningless unless Status is OK.
	Celsius float64
	// Status is StatusOK or the fault this reading records.
	Status Status
	// Raw is the field as received, kept for the record when Status is not OK.
	Raw string
}

// OK reports whether the reading holds a usable temperature.
func (r Reading) OK() bool { return r.Status == StatusOK }

// Source produces readings until its context ends. Run sends every reading on out and
// returns only when ctx is done (returning ctx.Err()) or on a configuration error that
// retrying cannot fix. A bad line or a lost port is reported and retried, never fatal.
type Source interface {
	// Name is the logger name used in logs and metric labels.
	Name() string
	// Run reads until ctx ends, sending readings on out.
	Run(ctx context.Context, out chan<- Reading) error
}
