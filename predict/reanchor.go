package predict

import (
	"cmp"
	"math"
	"slices"
	"time"
)

// Re-anchoring: between fits, each new reading moves the last fit along its own curve
// to where the readings say the specimen is now. The fitted curve keeps its shape
// (ambient, time constant, h(T)); only its phase follows the readings: the lead is the
// time by which the specimen is ahead of the fitted curve (positive when it has come
// further than the fit expected: cooler, on a cooling curve), and every predicted
// crossing and its interval come that much earlier. States never change here: reached,
// holding and ready to handle are decided at a fit, from the readings alone.
//
// The benchmark curves in testdata/bench, read every second, say how much this is
// worth (go test ./predict -run TestReanchorAccuracy -v): see the README's "Forecast
// freshness" for the table.

// anchorWindow is how many of the latest readings locate the specimen on the curve:
// the median of their leads, so one noisy reading does not move the forecast and a
// spike does not at all.
const anchorWindow = 10

// anchorLead returns the lead, s, by which the readings are ahead of curve: the lead of
// the reading whose own lead is the median of the latest anchorWindow readings', each
// the time by which the curve must run on from the reading's time to read its
// temperature (to first order, residual over slope; exactly, by a root find, for the
// median one). ok is false when the curve is flat there or never reaches that
// temperature within maxLead: the forecast then stays as it was. times are the
// readings' times, in order.
func anchorLead(curve func(time.Time) float64, times []time.Time, celsius []float64, maxLead float64) (lead float64, ok bool) {
	n := len(times)
	if n == 0 || curve == nil {
		return 0, false
	}
	type est struct {
		lead float64
		i    int
	}
	leads := make([]est, 0, anchorWindow)
	for i := max(0, n-anchorWindow); i < n; i++ {
		at := func(x float64) float64 { return curve(times[i].Add(seconds(x))) }
		slope := (at(slopeStep) - at(-slopeStep)) / (2 * slopeStep)
		l := (celsius[i] - at(0)) / slope
		if math.IsNaN(l) || math.IsInf(l, 0) {
			return 0, false
		}
		leads = append(leads, est{l, i})
	}
	slices.SortFunc(leads, func(a, b est) int { return cmp.Compare(a.lead, b.lead) })
	i := leads[(len(leads)-1)/2].i
	at := func(x float64) float64 { return curve(times[i].Add(seconds(x))) }
	return solveLevel(at, celsius[i], maxLead)
}

// slopeStep, s, is the half-width of the central difference that takes a curve's slope.
const slopeStep = 1.0

// solveLevel finds x with at(x) = level on a monotone curve near x = 0 by the secant
// method from a Newton step, within |x| ≤ maxLead; ok is false when it does not
// converge there.
func solveLevel(at func(float64) float64, level, maxLead float64) (float64, bool) {
	const tol = 1e-3 // s
	x0, f0 := 0.0, at(0)-level
	if f0 == 0 {
		return 0, true
	}
	slope := (at(slopeStep) - at(-slopeStep)) / (2 * slopeStep)
	if !(math.Abs(slope) > 0) || math.IsInf(slope, 0) {
		return 0, false
	}
	x1 := -f0 / slope
	for range 30 {
		if math.IsNaN(x1) || math.Abs(x1) > maxLead {
			return 0, false
		}
		f1 := at(x1) - level
		if f1 == 0 || math.Abs(x1-x0) < tol {
			return x1, true
		}
		if f1 == f0 {
			return 0, false
		}
		x0, x1, f0 = x1, x1-f1*(x1-x0)/(f1-f0), f1
	}
	return 0, false
}

// anchored returns f (a copy the caller owns) moved along its curve by lead seconds
// as of the reading at updated: every predicted target's crossing and interval come
// lead earlier, never before updated (plus the target's hold, as at a fit), and the
// curves run lead ahead; an open-ended interval stays open (its zero times stay zero)
// and its early bound never moves later.
// Other states and their times are left as fitted.
func (f *Forecast) anchored(lead float64, updated time.Time) *Forecast {
	f.UpdatedAt = updated
	if lead == 0 || f.Empty {
		return f
	}
	d := seconds(lead)
	f.Lead = d
	for i := range f.Targets {
		tf := &f.Targets[i]
		if tf.State != StatePredicted {
			continue
		}
		floor := updated.Add(tf.Target.Hold)
		open := tf.Latest.IsZero()
		move := func(t time.Time) time.Time {
			if t.IsZero() { // an open-ended interval: no central estimate or late end
				return t
			}
			if open && d < 0 && t.Equal(tf.Earliest) {
				// A "not before" is a lower bound from the readings at the fit, not a
				// point on the curve: readings lagging the curve (a sensor's lag, sparse
				// noisy readings) must not carry it later.
				return t
			}
			if t = t.Add(-d); t.Before(floor) {
				return floor
			}
			return t
		}
		tf.At, tf.Earliest, tf.Latest = move(tf.At), move(tf.Earliest), move(tf.Latest)
	}
	if c := f.Curve; c != nil {
		f.Curve = func(t time.Time) float64 { return c(t.Add(d)) }
	}
	if c := f.Centre; c != nil {
		f.Centre = func(t time.Time) float64 { return c(t.Add(d)) }
	}
	return f
}
