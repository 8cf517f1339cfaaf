package predict

import (
	"fmt"
	"math"
	"strings"
)

// The moving-air laws are a constant convective coefficient plus radiation, and the
// fit scales h by one factor (the heat capacity per unit area), so a law's shape is
// set by one number, radiation's share: the ratio ε/h_c. The candidates (movingH at
// movingEmissivity) are three points on that line, and between them a fitted ambient
// trades with the share: a law with too little radiation bends the curve too late
// and the fit puts the room high to match, one with too much puts it low (testdata/
// bench run41, a stainless sphere under a 23 W/(m²·K) fan, room 19.7 °C: at 25 %
// elapsed the 40 W/(m²·K) candidate put the room at 39.4 °C, and still air at 10.5).
// Refined, the share is one more parameter fitted under the room prior, and the
// evidence, not the grid, sets the room where the readings can: on run41 at 50 %
// elapsed the refined share gives 24 W/(m²·K) and the room at 21.6 °C (2 % of the
// remaining time off), where the grid's best gave 32.1 °C. At 25 % elapsed, with
// 0.3 K of noise, the readings cannot: the refined share's fit (28 W/(m²·K), room
// 28 °C) and still air's (10.5 °C) differ by 2.1 in the criterion, and still air is
// kept.

// shareRefH is the convective coefficient, W/(m²·K), of the reference form in which
// the share is fitted: h = shareRefH + ε′·h_rad(T, ε = 1), ε′ = ε·shareRefH/h_c. With
// ε′ up to 0.98 (the highest emissivity the engine uses) it spans every share down to
// a black surface under the weakest fan the candidates assume, movingH's 15
// W/(m²·K) (the benchmark's generator draws fans of 15–60 W/(m²·K), predict/benchgen).
const shareRefH = 15.0

// shareMaxH is the strongest forced coefficient, W/(m²·K), the share's lower bound
// allows with the lowest emissivity the engine uses (0.02): the top of the range of
// forced convection in gases, 250 (Incropera et al., Fundamentals of Heat and Mass
// Transfer, Table 1.1, from memory).
const shareMaxH = 250.0

// shareSD is the SD of the share's prior in ε′, centred on the candidate the fit
// starts from: wider than the whole range (0.0012–0.98), so that it only steadies a
// fit the readings leave flat. Our choice, not tuned.
const shareSD = 1.0

// refineMovingShare refits the moving-air h(T) fit r with radiation's share free (in
// the reference form, shareRefH) between a surface of emissivity 0.02 under
// shareMaxH and one of emissivity 0.98 under shareRefH, under the room prior when the
// ambient is fitted: one Levenberg–Marquardt fit with the share as a fourth parameter
// (fitEmissivityPrior, prior SD shareSD), then the fit at the share found, written
// back with r's emissivity and the convective coefficient that gives the same shape
// (refitH). It returns that fit and a note when it lowers the criterion
// n_eff·ln(RMSE²) (plus the room prior's term for a fitted ambient, as in chooseAir)
// by more than refineMargin; r and "" when it does not, when r is nil or not a
// moving-air fit, when the share found is the lower bound (no radiation: the
// lumped exponential, which chooseH weighs), or when the ambient is fitted and the
// curve spans less than wideSpanK (radiation's share then barely changes along it, as
// for refineUnknownEmissivity).
func refineMovingShare(p LumpedProblem, start *LumpedResult, r *HResult, like *hFit) (*HResult, string) {
	if r == nil || !(r.Law.ForcedH > 0) || r.Law.OpenWater > 0 || !(r.Law.Emissivity > 0) ||
		p.Ambient == nil && math.Abs(r.Initial-r.Ambient) < wideSpanK {
		return r, ""
	}
	rho := max(r.Rho, 0)
	nEff := float64(r.N) * (1 - rho) / (1 + rho)
	if nEff <= 0 {
		return r, ""
	}
	score := func(h *HResult) float64 { return h.priorScore(nEff) }
	if like == nil {
		like = sharedModels(p, start)
	}
	// r in the reference form: h′ = (shareRefH/h_c)·h, so q′ = q·h_c/shareRefH.
	ref := *r
	ref.Law.ForcedH = shareRefH
	ref.Law.Emissivity = r.Law.Emissivity * shareRefH / r.Law.ForcedH
	ref.q = r.q * r.Law.ForcedH / shareRefH
	lo, hi := 0.02*shareRefH/shareMaxH, 0.98
	if ref.Law.Emissivity > hi || ref.Law.Emissivity < lo {
		return r, ""
	}
	x, ok := fitEmissivityPrior(p, start, like, &ref, nEff, lo, hi, ref.Law.Emissivity, shareSD)
	if !ok || !(x[3] > lo*(1+1e-9)) {
		// At the lower bound the share is nil and the law the constant-h exponential,
		// which the lumped model already is (chooseH weighs it).
		return r, ""
	}
	// Back to r's emissivity: h = (ε/ε′)·h′, h_c = shareRefH·ε/ε′, q = q′·ε′/ε.
	law := r.Law
	law.ForcedH = shareRefH * r.Law.Emissivity / x[3]
	h := refitH(p, start, like, law, x[0], x[1]*x[3]/r.Law.Emissivity, x[2])
	if h == nil || score(h) > score(r)-refineMargin {
		return r, ""
	}
	h.shareFitted = true
	return h, fmt.Sprintf("Radiation's share fitted from the curve's shape: constant convection about %.0f W/(m²·K) beside emissivity %.2g (%.0f W/(m²·K) was the best of %s); only their ratio shows in the curve.",
		law.ForcedH, law.Emissivity, r.Law.ForcedH, joinFloats(movingH, "%.0f", ", "))
}

// guessedAirHandling leaves every predicted handling target open-ended ("not before"
// its early bound, no central estimate, no late end: leaveHandlingOpen) when the
// fitted model m is moving air chosen for an unknown specimen by less than airMargin
// (guessed, from chooseAir), and returns a note saying why ("" when it changed
// nothing). Still air and moving air can fit a curve's first part alike while putting
// the room, and so the time a limit near it is reached, far apart (testdata/bench
// run41 at 25 % elapsed: 10.5 and 28 °C, true 19.7, with the share refined); a
// handling time must not rest on the narrower choice. Only the readings crossing the
// limit make it reached.
func guessedAirHandling(tfs []TargetForecast, m fitted, guessed bool) string {
	h, ok := m.(hFitted)
	if !guessed || !ok || !(h.r.Law.ForcedH > 0) || !leaveHandlingOpen(tfs) {
		return ""
	}
	return "Handling limits: \"not before\" only, with no time to plan with: moving air is only guessed for this unknown specimen (its fit beats still air's by a narrow margin). Describe the specimen and its convection for a handling time."
}

// priorScore is the criterion the h(T) refinements weigh a fit by: nEff·ln(RMSE²),
// plus the room prior's term when the ambient is fitted (roomPriorTerm).
func (h *HResult) priorScore(nEff float64) float64 {
	return nEff*math.Log(max(h.RMSE*h.RMSE, 1e-300)) + h.roomPriorTerm()
}

// roomPriorTerm is −2 ln of the room prior's density at a fitted ambient (up to a
// constant), 0 when the ambient is measured: the term a fit with a fitted ambient
// carries when laws or emissivities are compared (fitHBest leans on the same prior).
func (h *HResult) roomPriorTerm() float64 {
	if h.Free != 3 {
		return 0
	}
	return math.Pow((h.Ambient-roomPrior)/roomPriorSD, 2)
}

// joinFloats formats each of xs with format and joins them with sep ("15, 40, 100"),
// for notes a technician reads.
func joinFloats(xs []float64, format, sep string) string {
	parts := make([]string, len(xs))
	for i, x := range xs {
		parts[i] = fmt.Sprintf(format, x)
	}
	return strings.Join(parts, sep)
}
