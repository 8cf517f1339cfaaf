// Package jsonval holds the small conversions every settle JSON output shares: JSON has
// no NaN or infinity, and a missing time is null rather than year 1.
package jsonval

import (
	"math"
	"time"
)

// Num returns a pointer to v, or nil for NaN and infinities (encoded as null).
func Num(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

// Time returns t in UTC, or nil for the zero time (encoded as null).
func Time(t time.Time) *time.Time {
	if t.IsZero() {
		return nil
	}
	u := t.UTC()
	return &u
}
