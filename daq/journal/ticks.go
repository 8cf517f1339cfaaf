package journal

import (
	"math"
	"time"
)

// Tick is the resolution of a reading's time in the journal (schema version 5 on):
// a reading written at time t is stored, and comes back, at Truncate(t).
//
// Why 100 µs: SQLite stores an integer in 1, 2, 3, 4, 6 or 8 bytes. Unix nanoseconds
// take 8; Unix milliseconds and 100 µs ticks both take 6 today (up to 2^47−1: the year
// 6429 for milliseconds, about 2415 for ticks, after which a time takes 8 bytes, still
// right, only larger), so the finer unit costs nothing. It keeps a logger at 100 lines
// a second (10 ms apart) resolved to 1 % of its interval, where milliseconds would
// shift a reading by up to a tenth of it, more than the host clock's jitter on a
// serial line, and the fits and the placement detector use those intervals. Two
// readings of one channel less than 100 µs apart (no logger this serves sends that
// fast; a repeated line does) share a time and keep the order they were written in:
// k orders readings of one channel with the same time (see ddlV4).
const Tick = 100 * time.Microsecond

// tickNs is Tick in nanoseconds; ticksPerSecond the ticks in a second.
const (
	tickNs         = int64(Tick)
	ticksPerSecond = int64(time.Second) / tickNs
)

// Truncate returns t rounded down to a whole Tick since the Unix epoch: the time the
// journal gives back for a reading written at t. The daemon truncates each reading's
// time as it receives it, so that what it fits, shows and acknowledges live is what a
// restart replays.
func Truncate(t time.Time) time.Time {
	// The zero Time lies a whole number of seconds before the Unix epoch, so Go's
	// Truncate, which counts from it, gives the same instant as tickTime(ticks(t)).
	return t.Truncate(Tick)
}

// ticks returns t in ticks since the Unix epoch, rounded down (toward the past, also
// before 1970). It does not overflow for any time a reading can carry, unlike
// t.UnixNano outside the years 1678–2262.
func ticks(t time.Time) int64 {
	return t.Unix()*ticksPerSecond + int64(t.Nanosecond())/tickNs
}

// ticksUp is ticks rounded up: the first tick at or after t.
func ticksUp(t time.Time) int64 {
	n := ticks(t)
	if int64(t.Nanosecond())%tickNs != 0 {
		n++
	}
	return n
}

// tickTime is the time of n ticks since the Unix epoch.
func tickTime(n int64) time.Time {
	s, r := n/ticksPerSecond, n%ticksPerSecond
	if r < 0 {
		s, r = s-1, r+ticksPerSecond
	}
	return time.Unix(s, r*tickNs)
}

// The bounds of a query on readings' times: a reading is in [from, to) when its time
// as the journal gives it back (Truncate of the time written) is, so a caller that
// checks the readings it gets against its bounds agrees with the query, adjacent
// ranges [a, b) and [b, c) share no reading, and bounds on whole ticks (whole seconds,
// or any time the journal gave back) select exactly the readings written in them.
// Both ends round up: Truncate(t) >= from exactly when ticks(t) >= ticksUp(from).
// A zero bound leaves that end open.

// loTick is the first tick of a range starting at from.
func loTick(from time.Time) int64 {
	if from.IsZero() {
		return math.MinInt64
	}
	return ticksUp(from)
}

// hiTick is the first tick after a range ending before to.
func hiTick(to time.Time) int64 {
	if to.IsZero() {
		return math.MaxInt64
	}
	return ticksUp(to)
}

// lastTick is the last tick of a range ending at to inclusive: Truncate(t) <= to
// exactly when ticks(t) <= lastTick(to).
func lastTick(to time.Time) int64 {
	return ticks(to)
}
