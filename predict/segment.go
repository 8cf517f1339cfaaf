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
// (or down to a trough) and then decays — so that a fit starts there. The direction
// is that of the last quarter of the readings (running median): falling means
// cooling, and the onset is the running median's maximum; rising means warming, and
// it is the minimum. An extreme among the last medianWindow readings gives 0.
func Onset(c []float64) int {
	n := len(c)
	if n < 2*medianWindow {
		return 0
	}
	m := runningMedian(c)
	cooling := m[n-1] <= m[n-1-n/4]
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

// median returns the median of xs (it sorts a copy).
func median(xs []float64) float64 {
	if len(xs) == 0 {
		return math.NaN()
	}
	s := slices.Clone(xs)
	slices.Sort(s)
	return s[len(s)/2]
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
	k := Onset(cs)
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
