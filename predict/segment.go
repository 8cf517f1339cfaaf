package predict

import (
	"math"
	"slices"
)

// medianWindow is the width of the running median used to find the onset and spikes.
const medianWindow = 5

// runningMedian returns the median of each reading's window of medianWindow readings
// (shorter at the ends).
func runningMedian(c []float64) []float64 {
	out := make([]float64, len(c))
	var win [medianWindow]float64
	for i := range c {
		lo, hi := max(0, i-medianWindow/2), min(len(c), i+medianWindow/2+1)
		w := win[:hi-lo]
		copy(w, c[lo:hi])
		slices.Sort(w)
		out[i] = w[len(w)/2]
	}
	return out
}

// Onset returns the index of the reading where the approach to the settling
// temperature begins — a specimen placed on the rack reads its way up to a peak
// (or down to a trough) and then decays — so that a fit starts there. It is
// OnsetWith without a measured ambient.
func Onset(c []float64) int { return OnsetWith(c, nil) }

// OnsetWith is Onset with the measured ambient beside each reading (nil when none).
// The direction comes from Direction: cooling means the onset is the running median's
// maximum, warming its minimum. An extreme among the last medianWindow readings
// gives 0.
func OnsetWith(c, ambient []float64) int {
	n := len(c)
	if n < 2*medianWindow {
		return 0
	}
	m := runningMedian(c)
	cooling := Direction(m, ambient) > 0
	k := 0
	for i, v := range m {
		if cooling && v > m[k] || !cooling && v < m[k] {
			k = i
		}
	}
	if k >= n-medianWindow {
		return 0
	}
	// The median lags a step by up to half a window: take the raw extreme near it.
	best := k
	for i := max(0, k-medianWindow/2); i <= min(n-1, k+medianWindow/2); i++ {
		if cooling && c[i] > c[best] || !cooling && c[i] < c[best] {
			best = i
		}
	}
	return best
}

// Thresholds of extremeSide, °C. With a measured ambient, the latest reading must lie
// measuredFar from it; against the room prior (known to about ±8 °C) the far extreme
// must lie priorFar from it and priorLead farther than the other extreme.
const (
	measuredFar         = 2.0
	priorFar, priorLead = 8.0, 5.0
)

// Direction returns +1 when the readings (a running median m, in time order) settle
// downward (cooling), −1 when upward (warming), and 0 when it cannot tell. Physics
// decides first (extremeSide), so that neither a short reversal (a door, a
// neighbour's heat, a re-warm) nor a baseline read before the placement can flip it;
// otherwise the trend of the last quarter of the readings decides.
func Direction(m, ambient []float64) float64 {
	if side, sure := extremeSide(m, ambient); sure {
		return side
	}
	return trendSide(m)
}

// extremeSide judges the direction from physics; sure is false when it cannot.
//
// With a measured ambient: a specimen more than measuredFar above it cools, below it
// warms (the ambient is what it settles toward, whatever a short re-warm says).
//
// Without one, against the room prior of 22 °C (known to about ±8 °C): the extreme of
// the readings that lies farther from the room (by priorFar, and priorLead more than
// the other) is where the action is. A specimen placed at that extreme and settling
// back toward the room has come back from it by a tenth of its excess or more, or is
// coming back now (its last quarter moved toward the room by minReturn): a peak means
// cooling, a trough warming. A curve still at its extreme is not sure: it may be
// a specimen just placed whose thermocouple has only now caught up, or one warming in
// an oven whose air is not measured.
func extremeSide(m, ambient []float64) (side float64, sure bool) {
	n := len(m)
	if n == 0 {
		return 0, false
	}
	if ambient != nil {
		d := m[n-1] - ambient[n-1]
		return sign(d), math.Abs(d) > measuredFar
	}
	up, down := slices.Max(m)-roomPrior, roomPrior-slices.Min(m)
	if max(up, down) < priorFar || math.Abs(up-down) < priorLead {
		return 0, false
	}
	extreme := slices.Max(m)
	if down > up {
		extreme = slices.Min(m)
	}
	excess := extreme - roomPrior
	recent := m[n-1] - m[max(0, n-1-max(1, n/4))] // the last quarter's change
	if math.Abs(extreme-m[n-1]) > 0.1*math.Abs(excess) ||
		sign(recent) == -sign(excess) && math.Abs(recent) > minReturn {
		return sign(excess), true
	}
	return 0, false
}

// minReturn, °C: a last quarter that moved back toward the room by more than this (a
// few quantisation steps of a logger) shows the specimen settling from its extreme.
const minReturn = 0.5

// trendSide is the direction of the last quarter of the readings m: +1 falling (or
// flat), −1 rising.
func trendSide(m []float64) float64 {
	n := len(m)
	if n < 2 {
		return 0
	}
	if m[n-1] <= m[n-1-n/4] {
		return 1
	}
	return -1
}

// Spikes marks readings that stand out from their running median by more than
// max(minSpike, 8 × the median absolute deviation of all readings from it), and from
// both neighbours by more than that in the same direction: a single bad reading from
// a loose contact or interference, which must not bend a fit. The
// two readings at each end are never marked (their window is one-sided).
func Spikes(c []float64, minSpike float64) []bool {
	bad := make([]bool, len(c))
	if len(c) < medianWindow {
		return bad
	}
	m := runningMedian(c)
	dev := make([]float64, len(c))
	for i := range c {
		dev[i] = math.Abs(c[i] - m[i])
	}
	mad := median(dev)
	limit := max(minSpike, 8*mad)
	// The window is lopsided at the ends, where a steep curve would look like spikes;
	// the two readings at each end are not judged.
	// A spike also stands out from both neighbours, in the same direction; the first
	// reading after a real step (a specimen placed) does not.
	for i := 2; i < len(c)-2; i++ {
		d := c[i] - m[i]
		bad[i] = dev[i] > limit && (c[i]-c[i-1])*d > limit*math.Abs(d) && (c[i]-c[i+1])*d > limit*math.Abs(d)
	}
	return bad
}

// median returns the median of xs: the element a sort would put at len(xs)/2 (the
// upper median), found on a copy by selection, which is linear where a sort is not (the
// sort of a 2,000-reading segment's second differences was about 5 % of a fit; the
// standard library has no selection). With a NaN in xs it sorts the copy, as before.
func median(xs []float64) float64 {
	if len(xs) == 0 {
		return math.NaN()
	}
	s := slices.Clone(xs)
	if slices.ContainsFunc(s, math.IsNaN) {
		slices.Sort(s)
		return s[len(s)/2]
	}
	return selectKth(s, len(s)/2)
}

// selectKth returns the element of s a sort would put at k, reordering s (Hoare's
// selection with a median-of-three pivot; s holds no NaN).
func selectKth(s []float64, k int) float64 {
	lo, hi := 0, len(s)-1
	for lo < hi {
		mid := lo + (hi-lo)/2
		if s[mid] < s[lo] {
			s[mid], s[lo] = s[lo], s[mid]
		}
		if s[hi] < s[lo] {
			s[hi], s[lo] = s[lo], s[hi]
		}
		if s[hi] < s[mid] {
			s[hi], s[mid] = s[mid], s[hi]
		}
		pivot := s[mid]
		i, j := lo, hi
		for i <= j {
			for s[i] < pivot {
				i++
			}
			for pivot < s[j] {
				j--
			}
			if i <= j {
				s[i], s[j] = s[j], s[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return s[k]
		}
	}
	return s[k]
}

// spikeMin is the least deviation from the running median, °C, that counts as a spike.
const spikeMin = 2.0

// Prepare cleans one segment's readings for Analyze: non-finite readings (and
// readings whose measured ambient is not finite) are dropped, spikes (Spikes) are
// dropped, and the fit starts at the Onset. times are seconds on any origin, in
// non-decreasing order; ambient may be nil. It returns the problem with times in
// seconds from the onset, the onset's time on the input's axis, and how many
// readings were dropped as spikes or non-finite.
func Prepare(times, celsius, ambient []float64) (p LumpedProblem, onset float64, dropped int) {
	var ts, cs, as []float64
	for i, c := range celsius {
		if math.IsNaN(c) || math.IsInf(c, 0) || math.IsNaN(times[i]) ||
			ambient != nil && (math.IsNaN(ambient[i]) || math.IsInf(ambient[i], 0)) {
			dropped++
			continue
		}
		ts, cs = append(ts, times[i]), append(cs, c)
		if ambient != nil {
			as = append(as, ambient[i])
		}
	}
	bad := Spikes(cs, spikeMin)
	kept := 0
	for i := range cs {
		if bad[i] {
			dropped++
			continue
		}
		ts[kept], cs[kept] = ts[i], cs[i]
		if as != nil {
			as[kept] = as[i]
		}
		kept++
	}
	ts, cs = ts[:kept], cs[:kept]
	if as != nil {
		as = as[:kept]
	}
	if kept == 0 {
		return LumpedProblem{}, 0, dropped
	}
	k := OnsetWith(cs, as)
	onset = ts[k]
	p.Times, p.Celsius = ts[k:], cs[k:]
	for i := range p.Times {
		p.Times[i] -= onset
	}
	if as != nil {
		p.Ambient = as[k:]
	}
	return p, onset, dropped
}
