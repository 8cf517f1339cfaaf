package predict

import (
	"fmt"
	"math"
)

// Hot water poured into a mug or a beaker is not one lumped body at first: the
// vessel's wall starts near the room and takes up heat from the water in the first
// minutes (a second body, the wall, coupled to the water). The water's curve is then
// the sum of two modes — the whole settling slowly toward the room and the wall
// catching up with the water — and only the slow one is the cooling the forecast
// needs: the fast one bends the first minutes, which a fit of one body reads as a
// steep surface law (open water, the evaporation law's bend) or a settling
// temperature far from the room. A wall that starts warmer than the water (a mug
// warmed beforehand) bends them the other way, slower at first.
//
// The fast mode's time constant is that of heat crossing the wall: a glazed ceramic
// wall 3–6 mm thick (k ≈ 1.0–1.5 W/(m·K), ρ ≈ 2,300 kg/m³, c ≈ 850 J/(kg·K); porcelain
// and stoneware, from memory) has L²/α ≈ 10–70 s, and the water side's natural
// convection adds a like amount, so after five minutes the fast mode has decayed by
// about e^−2 or more (common practice: a transient is over after a few time
// constants). A glass beaker's thinner wall settles sooner. Measured on the mugs of
// ../shared/realdata (TestAccuracyReal; the diagnosis beside oilFilmSegments): with an
// oil film, the first 4-minute step drops 2.2 K, the next 1.7 K, then 1.4 K a step,
// and a fit of the readings from 5 minutes on under convection and radiation alone
// settles at 22 °C with 0.04 K rms over the whole 220 minutes.

// vesselSettleS is the time after the segment's start, s, from which the readings of
// a specimen guessed to be hot water are taken to show the slow mode alone (see above).
const vesselSettleS = 300.0

// vesselMargin is how much lower Akaike's criterion of the fit after the vessel's
// transient must be than that of the fit of every reading for it to replace that fit
// (the engine's usual margin, as in chooseH and fitOpenWater). The criterion is taken
// over every reading, n·ln(SS_whole/SS_after) − 2k, with the k readings left out
// counted as k parameters of their own (the transient's): an upper bound on the fast
// mode's price, which keeps a dense logger's first minutes (300 readings at 1 Hz) in
// the fit unless they clearly do not belong to it.
const vesselMargin = 2.0

// fitAfterVessel tries the readings of an unknown specimen from vesselSettleS on as
// hot water in a vessel whose wall was still taking up heat before then: for a cooling
// curve with a fitted ambient that starts between waterMinC and waterMaxC, with at
// least minPointsWater readings after vesselSettleS and a fit of the whole segment
// (whole: the h(T) fit when there is one, else the lumped exponential lr when it
// succeeded), the still-air laws and then the open-water laws are fitted to those
// readings alone (the water's surface may be open or covered: fitOpenWater chooses).
// The fit after the transient replaces the whole one when it lowers Akaike's criterion
// by more than vesselMargin (see there) and settles within two standard deviations
// of the room prior (as fitOpenWater's fits must); it is returned
// with its time origin moved to the first reading used (HResult.offset) and the
// readings it was fitted to, times from that reading (for the interval's backtest),
// and a note saying why. Else nil.
func fitAfterVessel(p LumpedProblem, lr *LumpedResult, lrErr error, whole *HResult) (*HResult, LumpedProblem, string) {
	n := len(p.Times)
	if n < minPointsWater || p.Ambient != nil || p.Celsius[n-1] >= p.Celsius[0] {
		return nil, LumpedProblem{}, ""
	}
	if first := p.Celsius[0]; first < waterMinC || first > waterMaxC {
		return nil, LumpedProblem{}, ""
	}
	var ref fitted
	switch {
	case whole != nil:
		ref = hFitted{whole}
	case lrErr == nil:
		ref = lumpedFitted{lr}
	default:
		return nil, LumpedProblem{}, ""
	}
	k := 0
	for k < n && p.Times[k]-p.Times[0] < vesselSettleS {
		k++
	}
	if k == 0 || n-k < minPointsWater {
		return nil, LumpedProblem{}, ""
	}
	if !vesselMayWin(ref, n, k) {
		return nil, LumpedProblem{}, ""
	}
	off := p.Times[k]
	tail := LumpedProblem{Times: make([]float64, n-k), Celsius: p.Celsius[k:]}
	for i, t := range p.Times[k:] {
		tail.Times[i] = t - off
	}
	r, wet := fitTail(tail)
	if r == nil || math.Abs(r.Ambient-roomPrior) > 2*roomPriorSD {
		return nil, LumpedProblem{}, ""
	}
	// Akaike's criterion over every reading: the fit after the transient leaves the
	// first k readings free (the transient's), k more parameters than the whole fit.
	var ssWhole, ssAfter float64
	for i, t := range p.Times {
		d := p.Celsius[i] - ref.value(t)
		ssWhole += d * d
		if i >= k {
			e := p.Celsius[i] - r.Value(t-off)
			ssAfter += e * e
		}
	}
	if float64(n)*math.Log(max(ssWhole, 1e-300)/max(ssAfter, 1e-300))-2*float64(k) <= vesselMargin {
		return nil, LumpedProblem{}, ""
	}
	r.offset = off
	note := vesselNote(r, ref, k)
	if wet != "" {
		note += " " + wet
	}
	return r, tail, note
}

// vesselMayWin reports whether a fit of the readings after the first k of n could
// lower Akaike's criterion enough (fitAfterVessel) against ref, the fit of every
// reading: at best it removes ref's smooth misfit and leaves the noise alone,
// (n − k − 3)·σ² with σ² = RMSE² − misfit² (the noise ref's residuals show). A curve
// the whole fit follows within its noise (a solid specimen in the water range) is
// spared the later readings' seven fits: BenchmarkAnalyzeWarm2000 would cost about
// twice the CPU without the check.
func vesselMayWin(ref fitted, n, k int) bool {
	rmse := ref.rmse()
	_, misfit := ref.residuals()
	noise2 := max(rmse*rmse-misfit*misfit, 1e-12)
	best := float64(n-k-3) * noise2
	return float64(n)*math.Log(max(float64(n)*rmse*rmse, 1e-300)/best)-2*float64(k) > vesselMargin
}

// fitTail fits the still-air h(T) laws of an unknown specimen to the readings tail,
// with the room prior on the settling temperature, and then the open-water laws
// (fitOpenWater), and returns the better, with fitOpenWater's note when it is open
// water; nil when no fit succeeds.
func fitTail(tail LumpedProblem) (*HResult, string) {
	var lumped *LumpedResult
	if lr, err := FitLumped(tail, nil); err == nil {
		lumped = &lr
	}
	dry, start := fitDryStill(tail, lumped)
	if dry == nil {
		return nil, ""
	}
	return fitOpenWater(tail, start, dry)
}

// unshifted returns a copy of r with its time origin at the first reading it was
// fitted to (offset 0), as its backtest refits it.
func (r *HResult) unshifted() *HResult {
	u := *r
	u.offset = 0
	return &u
}

// vesselNote says why the first readings were left out of the fit r (the whole
// fit of every reading settled elsewhere).
func vesselNote(r *HResult, whole fitted, left int) string {
	what := "convection and radiation alone (the surface covered, or not water)"
	if r.Law.OpenWater > 0 {
		what = fmt.Sprintf("evaporation from an open water surface over %.0f %% of the surface", 100*r.Law.OpenWater)
	}
	return fmt.Sprintf(
		"Hot water in a vessel? The %d readings before %.0f s are left out of the fit: the vessel's wall takes up heat from the water at first and bends them more than the cooling that follows (a fit of every reading settles at %.0f °C and misses the later readings); from %.0f s on, %s fits them, settling at %.0f °C. Say what the specimen is to confirm it.",
		left, r.offset, whole.ambient(), r.offset, what, r.Ambient)
}
