package predict

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestMedianMatchesSort: the selection gives the element a sort puts at len/2 — the
// definition it replaces (slices.Sort from the standard library as the reference) — on
// random slices with repeats, sorted and reversed runs, ±0, infinities and NaN.
func TestMedianMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	bySort := func(xs []float64) float64 {
		s := slices.Clone(xs)
		slices.Sort(s)
		return s[len(s)/2]
	}
	cases := [][]float64{{1}, {2, 1}, {3, 3, 3}, {0, math.Copysign(0, -1), 0}, {math.Inf(1), 1, math.Inf(-1)}, {1, math.NaN(), 2}}
	for n := 1; n < 300; n += 7 {
		r := make([]float64, n)
		for i := range r {
			r[i] = math.Round(rng.NormFloat64() * 3) // many repeats
		}
		asc := slices.Clone(r)
		slices.Sort(asc)
		desc := slices.Clone(asc)
		slices.Reverse(desc)
		cases = append(cases, r, asc, desc)
	}
	for _, xs := range cases {
		before := slices.Clone(xs)
		got, want := median(xs), bySort(xs)
		// == and not bits: among equal elements (0 and −0) a sort's pick is arbitrary too.
		if got != want && !(math.IsNaN(got) && math.IsNaN(want)) {
			t.Errorf("median of %d values %v: %v, a sort gives %v", len(xs), xs[:min(len(xs), 8)], got, want)
		}
		if !slices.EqualFunc(xs, before, func(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) }) {
			t.Fatalf("median reordered its input")
		}
	}
	if !math.IsNaN(median(nil)) {
		t.Error("median of nothing is not NaN")
	}
}
