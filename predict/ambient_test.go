package predict

import (
	"math"
	"testing"
)

// TestSmoothAmbientStart holds smoothAmbient on a chamber's control swing (20 °C
// ± 0.25 K with a 120 s period, read every 4 s: the shape logged beside the cell rests
// in ../shared/realdata): every value, the segment's first readings included, lies
// within A·P/(π·W) = 0.032 K of the mean (the largest mean of a sine over a window W
// of its period P; elementary calculus, no source), the first 300 s all carry the
// mean of that span, and later values are the trailing mean over 300 s.
func TestSmoothAmbientStart(t *testing.T) {
	if smoothAmbient(nil, nil) != nil {
		t.Error("nil ambient: want nil")
	}
	var times, amb []float64
	for s := 0.0; s <= 900; s += 4 {
		times = append(times, s)
		amb = append(amb, 20+0.25*math.Sin(2*math.Pi*(s+30)/120))
	}
	got := smoothAmbient(times, amb)
	bound := 0.25 * 120 / (math.Pi * ambientWindowS)
	trailing := func(i int, from float64) float64 {
		var s, n float64
		for j := 0; j <= i; j++ {
			if times[j] >= from {
				s, n = s+amb[j], n+1
			}
		}
		return s / n
	}
	for i, g := range got {
		if math.Abs(g-20) > bound {
			t.Errorf("t = %.0f s: smoothed %.4f °C, more than %.3f K from the mean 20", times[i], g, bound)
		}
		want := trailing(i, times[i]-ambientWindowS)
		if times[i] <= ambientWindowS {
			want = trailing(75, 0) // readings 0…75 span the first 300 s
		}
		if math.Abs(g-want) > 1e-12 {
			t.Errorf("t = %.0f s: smoothed %.6f °C, want %.6f", times[i], g, want)
		}
	}
	// The plain trailing mean's second value (two readings) is what the first span's
	// mean replaces: it carries the swing nearly at full size.
	if d := math.Abs(trailing(1, 0) - 20); d < 0.2 {
		t.Errorf("trailing mean of the first two readings %.3f K from the mean; the test's swing is meant to show it", d)
	}
}
