package clean

import (
	"cmp"
	"maps"
	"sync"
	"time"

	"github.com/settle-lab/settle/daq"
)

// Defaults for the zero values of ClockOptions.
const (
	// DefaultMaxAhead is how far a logger's own calendar clock may run ahead of the
	// host's before its readings are faults: generous for a clock never set right,
	// far below a garbled year or hour digit.
	DefaultMaxAhead = time.Hour
	// DefaultMaxJump is the least jump ahead of a channel's previous reading that is
	// judged against the wall time passed.
	DefaultMaxJump = 5 * time.Minute
	// DefaultPace is the fastest logger clock allowed relative to the wall clock (a
	// time-lapse replay; the demo runs at 60).
	DefaultPace = 100
	// DefaultConfirm is how many consecutive readings on a new clock, consistent with
	// each other, make it the channel's clock (a logger whose clock was reset).
	DefaultConfirm = 5
)

// ClockOptions tune a ClockCheck. The zero value means the defaults.
type ClockOptions struct {
	// MaxAhead bounds how far ahead of the wall clock a reading of a logger with a
	// calendar clock (unix, rfc3339 or a layout) may be (0: 1 h).
	MaxAhead time.Duration
	// MaxJump and Pace bound a jump ahead of the channel's previous accepted reading:
	// at most MaxJump + Pace × the wall time between them (0: 5 min and 100).
	MaxJump time.Duration
	// Pace: see MaxJump.
	Pace float64
	// Confirm is how many consistent readings accept a new clock (0: 5).
	Confirm int
	// Calendar holds the loggers whose readings carry a calendar clock (unix, rfc3339
	// or a layout; daq.LineFormat.CalendarClock), by name: MaxAhead applies to them.
	Calendar map[string]bool
}

// ClockCheck flags readings whose time jumps far ahead (daq.StatusClock): a reading
// with such a time would otherwise become a channel's newest and freeze its fit, since
// fits take readings in time order. It is safe for concurrent use.
type ClockCheck struct {
	opt      ClockOptions
	calendar map[string]bool // logger → its readings carry a calendar clock
	mu       sync.Mutex
	chans    map[key]*clockState
}

type clockState struct {
	last, lastWall time.Time // the newest accepted reading time and its wall time
	cand, candWall time.Time // the newest suspect reading, while a new clock is confirmed
	candN          int
}

// NewClockCheck returns a check with options o: the wall-clock bound applies to the
// loggers in o.Calendar, the neighbour bound to every channel.
func NewClockCheck(o ClockOptions) *ClockCheck {
	o.MaxAhead = cmp.Or(o.MaxAhead, DefaultMaxAhead)
	o.MaxJump = cmp.Or(o.MaxJump, DefaultMaxJump)
	o.Pace = cmp.Or(o.Pace, DefaultPace)
	o.Confirm = cmp.Or(o.Confirm, DefaultConfirm)
	return &ClockCheck{opt: o, calendar: maps.Clone(o.Calendar), chans: map[key]*clockState{}}
}

// Check returns r, with StatusClock when r is OK but its time is implausible at wall
// time now.
func (c *ClockCheck) Check(r daq.Reading, now time.Time) daq.Reading {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.calendar[r.Logger] && r.Time.Sub(now) > c.opt.MaxAhead {
		return flagClock(r)
	}
	k := key{r.Logger, r.Channel}
	st := c.chans[k]
	if st == nil {
		st = &clockState{}
		c.chans[k] = st
	}
	if st.last.IsZero() || !c.jumps(st.last, st.lastWall, r.Time, now) {
		st.last, st.lastWall, st.candN = maxTime(st.last, r.Time), now, 0
		return r
	}
	// A suspect: the start of a new clock when Confirm of them follow each other.
	if st.candN > 0 && !r.Time.Before(st.cand) && !c.jumps(st.cand, st.candWall, r.Time, now) {
		st.candN++
	} else {
		st.candN = 1
	}
	st.cand, st.candWall = r.Time, now
	if st.candN >= c.opt.Confirm {
		st.last, st.lastWall, st.candN = r.Time, now, 0
	}
	return flagClock(r)
}

// jumps reports whether t lies further ahead of prev than the wall time since
// prevWall allows.
func (c *ClockCheck) jumps(prev, prevWall, t, now time.Time) bool {
	allowed := c.opt.MaxJump + time.Duration(c.opt.Pace*float64(max(now.Sub(prevWall), 0)))
	return t.Sub(prev) > allowed
}

func flagClock(r daq.Reading) daq.Reading {
	if r.OK() {
		r.Status, r.Raw = daq.StatusClock, r.Time.UTC().Format(time.RFC3339Nano)
	}
	return r
}

func maxTime(a, b time.Time) time.Time {
	if b.After(a) {
		return b
	}
	return a
}
