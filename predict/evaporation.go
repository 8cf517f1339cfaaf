package predict

import (
	"fmt"
	"math"
	"time"

	"github.com/settle-lab/settle/predict/surface"
)

// Evaporation from an open water surface (hot water in a mug or a beaker). Beside
// convection and radiation, the surface loses the latent heat of the water that
// evaporates from it:
//
//	q_evap = h_m · h_fg · (ρ_v,sat(T_s) − ρ_v(∞)),
//
// with the mass-transfer coefficient from the heat/mass-transfer analogy
// (Chilton–Colburn): h_m = h_conv / (ρ·c_p·Le^(2/3)), ρ and c_p those of the air at the
// film temperature, Le = α/D_AB the Lewis number of water vapour in air. Near boiling
// the vapour density at the surface is 25 times that at room temperature, so the loss
// per kelvin of excess is several times that of convection and radiation when hot and
// falls steeply on cooling: the curve is not one exponential.
//
// The vapour density far from the surface is taken as saturated at the settling
// temperature, ρ_v(∞) = ρ_v,sat(T∞): then q_evap vanishes at T∞ and reads as a
// coefficient h_evap = q_evap / (T_s − T∞) the h(T) model can integrate. Room air is
// rarely saturated; unsaturated air keeps evaporating at T∞, and the water settles
// below the room's temperature (toward its wet-bulb temperature). The fitted ambient
// absorbs that shift: with an open water surface it is the settling temperature.

// Water vapour and latent heat constants.
const (
	// waterMolarMass is M_w, kg/mol (IUPAC standard atomic weights: 2 × 1.008 +
	// 15.999 = 18.015 g/mol).
	waterMolarMass = 0.018015
	// gasConstant is R, J/(mol·K) (CODATA 2018, exact given the 2019 SI constants).
	gasConstant = 8.314462618
	// latentHeat0 and latentHeat100 are water's latent heat of vaporisation at 0 and
	// 100 °C, J/kg (saturated-steam tables: 2501 and 2257 kJ/kg; from memory).
	latentHeat0   = 2.501e6
	latentHeat100 = 2.257e6
	// vapourLewis23 is Le^(2/3) for water vapour in air: α = 22.5e-6 m²/s for air at
	// 300 K (Incropera et al., Table A.4, as in predict/surface) over D_AB = 0.26e-4
	// m²/s for water vapour in air at 298 K (Incropera et al., Table A.8; from memory)
	// gives Le = 0.87; its two-thirds power is 0.91. Both grow with temperature at
	// about the same rate (as T^1.5 to T^1.8; from memory), so Le is kept constant.
	vapourLewis23 = 0.91
)

// saturationPressure returns the saturation vapour pressure of water over a flat
// liquid surface, Pa, at c °C, by Buck's equation in the form Buck recommended in
// 1996 (Buck Research, CR-1A hygrometer manual, appendix 1; a revision of Buck 1981,
// J. Appl. Meteor. 20, 1527–1532): e_s = 611.21·exp((18.678 − T/234.5)·T/(257.14 + T)).
// It was fitted for −80 to 50 °C; up to 100 °C it stays within 0.2 % of the steam
// tables (0.11 % low at 100 °C; TestSaturationPressure).
func saturationPressure(c float64) float64 {
	return 611.21 * math.Exp((18.678-c/234.5)*c/(257.14+c))
}

// saturationDensity returns the density of saturated water vapour, kg/m³, at c °C,
// as an ideal gas: ρ = e_s·M_w/(R·T).
func saturationDensity(c float64) float64 {
	return saturationPressure(c) * waterMolarMass / (gasConstant * (c + surface.ZeroCelsius))
}

// latentHeat returns water's latent heat of vaporisation, J/kg, at c °C: linear
// between its values at 0 and 100 °C (within 0.2 % of the steam tables between;
// TestLatentHeat).
func latentHeat(c float64) float64 {
	return latentHeat0 + (latentHeat100-latentHeat0)*c/100
}

// evaporationH returns the evaporative coefficient h_evap = q_evap/(T_s − T∞),
// W/(m²·K) of open water surface, for a convective coefficient hc at the surface
// temperature ts and settling temperature ta (°C). At T_s = T∞ it is the limit,
// the slope of ρ_v,sat there. It is 0 where hc is not positive. (Below 0 °C it is
// that of supercooled water; a specimen of water is only tried from 40 °C down to
// near its ambient.)
func evaporationH(hc, ts, ta float64) float64 {
	if !(hc > 0) {
		return 0
	}
	air := surface.Air((ts+ta)/2 + surface.ZeroCelsius)
	hm := hc / (air.Rho * air.Cp * vapourLewis23)
	d := ts - ta
	var slope float64
	if math.Abs(d) < 1e-3 {
		const e = 1e-3
		slope = (saturationDensity(ts+e) - saturationDensity(ts-e)) / (2 * e)
	} else {
		slope = (saturationDensity(ts) - saturationDensity(ta)) / d
	}
	return hm * latentHeat(ts) * slope
}

// evaporationShift returns evaporationH(hc(ts, ta), ts, ta) and its derivative for a
// common shift of both temperatures (see SurfaceLaw.hShift), by a central
// difference; hc gives the convective coefficient at a pair of temperatures.
func evaporationShift(hc func(ts, ta float64) float64, ts, ta float64) (h, dh float64) {
	const e = 1e-4
	h = evaporationH(hc(ts, ta), ts, ta)
	up := evaporationH(hc(ts+e, ta+e), ts+e, ta+e)
	down := evaporationH(hc(ts-e, ta-e), ts-e, ta-e)
	return h, (up - down) / (2 * e)
}

// convectionH is the law's convective coefficient alone (no radiation), W/(m²·K).
func (l SurfaceLaw) convectionH(surfaceC, ambientC float64) float64 {
	if l.ForcedH > 0 {
		return l.ForcedH
	}
	return surface.Convection(l.Geometry, l.LengthM, surfaceC, ambientC)
}

// waterH is H for a law with an open water surface: convection and radiation over the
// whole surface plus evaporation over the OpenWater share of it.
func (l SurfaceLaw) waterH(surfaceC, ambientC float64) float64 {
	hc := l.convectionH(surfaceC, ambientC)
	return hc + surface.Radiation(l.Emissivity, surfaceC, ambientC) + l.OpenWater*evaporationH(hc, surfaceC, ambientC)
}

// waterShift is hShift for a law with an open water surface.
func (l SurfaceLaw) waterShift(surfaceC, ambientC float64) (h, dh float64) {
	dry := l
	dry.OpenWater = 0
	h, dh = dry.hShift(surfaceC, ambientC)
	e, de := evaporationShift(l.convectionH, surfaceC, ambientC)
	return h + l.OpenWater*e, dh + l.OpenWater*de
}

// An unknown specimen cooling from between waterMinC and waterMaxC may be water with
// an open surface (a mug or a beaker of hot water): its curve bends more steeply
// than convection and radiation alone can bend it, and the dry h(T) fit explains the
// bend with a settling temperature far above the room's. fitOpenWater tries the
// open-water laws beside the dry fit.
const (
	waterMinC = 40.0
	waterMaxC = 100.0
)

// openWaterShares are the shares of the surface taken as open water. The top of a
// mug is about a fifth of its outer surface, but the mug's own warming in the first
// minutes bends the curve the same way, so larger shares are tried too.
var openWaterShares = []float64{0.1, 0.2, 0.4, 0.8}

// waterEmissivity is the emissivity of the open-water laws: water and glazed ceramic
// or glass are all near 0.9–0.95 in the thermal infrared (common practice; Incropera
// et al., Table A.11, from memory).
const waterEmissivity = 0.9

// openWaterMargin is how much lower an open-water fit's criterion must be than the
// dry fit's for it to replace it: Akaike's price of one more fitted parameter.
const openWaterMargin = 2.0

// openWaterRMSE is the most an open-water fit's rms residual may exceed the dry
// fit's, as a factor: the room prior alone must not carry a worse fit.
const openWaterRMSE = 1.1

// fitOpenWater refits the still-air h(T) fit r of an unknown specimen with a fitted
// ambient under the open-water laws (openWaterShares) and returns the best by the
// criterion n_eff·ln(RMSE²) + ((T∞ − 22)/8)² (the room prior on the settling
// temperature, which the dry fit's is far from) when it beats r's by more than
// openWaterMargin, with a note; else r and "". Only a cooling curve that starts
// between waterMinC and waterMaxC is tried. Each share is refitted from the previous
// fit (refitH, the readings' models shared): BenchmarkAnalyzeWater2000 8.9 -> 8.4 ms
// of CPU against a fresh fit per share, side by side (median of 5).
func fitOpenWater(p LumpedProblem, start *LumpedResult, r *HResult) (*HResult, string) {
	if r == nil || p.Ambient != nil || r.Law.ForcedH > 0 || r.table.side < 0 {
		return r, ""
	}
	if first := p.Celsius[0]; first < waterMinC || first > waterMaxC {
		return r, ""
	}
	rho := max(r.Rho, 0)
	nEff := float64(r.N) * (1 - rho) / (1 + rho)
	score := func(h *HResult) float64 {
		d := (h.Ambient - roomPrior) / roomPriorSD
		return nEff*math.Log(max(h.RMSE*h.RMSE, 1e-300)) + d*d
	}
	base := score(r)
	best, bestScore := r, base
	hp := HProblem{Times: p.Times, Celsius: p.Celsius, Law: r.Law}
	like := newHFit(hp, start, maxFitPoints) // the readings' models, shared by the refits
	prev := r
	for _, s := range openWaterShares {
		law := DefaultSurfaceLaw
		law.Emissivity, law.OpenWater = waterEmissivity, s
		h := refitFrom(p, start, like, prev, law)
		if h != nil {
			prev = h
		}
		if h != nil && h.RMSE <= openWaterRMSE*r.RMSE && math.Abs(h.Ambient-roomPrior) <= 2*roomPriorSD && score(h) < bestScore {
			best, bestScore = h, score(h)
		}
	}
	if best == r || bestScore > base-openWaterMargin {
		return r, ""
	}
	return best, openWaterGuessNote(r, best)
}

// openWaterGuessNote says why the open-water fit best replaced the dry fit r: the dry
// fit settling far above a room (waterSuspect), or, on a few readings where the room
// prior holds it near the room, only the better fit of the readings' bend.
func openWaterGuessNote(r, best *HResult) string {
	why := fmt.Sprintf("Convection and radiation alone settle this curve at %.0f °C, far above a room", r.Ambient)
	if !waterSuspect(r) {
		why = fmt.Sprintf("On these few readings convection and radiation alone (held near the room by its prior, at %.0f °C) bend less than the readings do", r.Ambient)
	}
	return fmt.Sprintf(
		"Open water? %s; with evaporation from an open water surface over %.0f %% of the surface it settles at %.0f °C (rms %.3g vs %.3g K). Say what the specimen is to confirm it (a warm surrounding above the room bends a solid specimen's curve the same way at first).",
		why, 100*best.Law.OpenWater, best.Ambient, best.RMSE, r.RMSE)
}

// refitFrom refits p under law (refitH) from the fit prev under another law: the
// same ambient and w0, and the rate scaled so that the mid-curve loss is the same.
func refitFrom(p LumpedProblem, start *LumpedResult, like *hFit, prev *HResult, law SurfaceLaw) *HResult {
	mid := prev.Ambient + (prev.Initial-prev.Ambient)/2
	q := prev.q * prev.Law.H(mid, prev.Ambient) / law.H(mid, prev.Ambient)
	return refitH(p, start, like, law, prev.w0, q, prev.Ambient)
}

// roomPenalty is the room prior's term ((T∞ − 22)/8)² on a fitted settling
// temperature. The open-water fit was chosen over the dry one with it (fitOpenWater),
// so the lumped exponential is weighed against it with the same term (chooseH): on
// a mug of hot water the exponential too bends early by settling far above the room.
// There it is added to an AIC over all the readings rather than fitOpenWater's
// effective count, so on a long record it weighs less than in the open-water choice.
func roomPenalty(amb float64) float64 {
	d := (amb - roomPrior) / roomPriorSD
	return d * d
}

// openWaterNote says what the open-water h(T) law assumes of an unknown specimen.
func openWaterNote(r *HResult) string {
	return fmt.Sprintf(
		"Specimen unknown, taken as water with an open surface: h(T) assumes a %v %.2g m with emissivity %.2g, and evaporation (Buck's vapour pressure, the Chilton–Colburn analogy) from %.0f %% of the surface; the heat capacity per unit area ρcV/A is fitted, and the fitted settling temperature (on a room prior of 22 ± 8 °C) includes evaporation's cooling below the room's.",
		r.Law.Geometry, r.Law.LengthM, r.Law.Emissivity, 100*r.Law.OpenWater)
}

// waterSuspect reports whether the still-air h(T) fit r of a curve with enough
// readings for it (minPointsH) shows the open-water symptom: it settles more than
// one prior standard deviation above the room (above 30 °C). Only then are the
// open-water laws tried (fitOpenWater), which spares a solid specimen settling toward
// the room their four fits: without the check, BenchmarkAnalyzeWarm2000 took 7.5 ms
// of CPU where the code before evaporation.go took 3.3 ms. With fewer readings the
// room prior holds the dry fit's settling temperature near the room, so fitFewWater
// tries them without it.
func waterSuspect(r *HResult) bool {
	return r != nil && r.Ambient > roomPrior+roomPriorSD
}

// minPointsWater is the fewest readings for which fitFewWater tries the open-water
// laws, below minPointsH: with the room prior holding the settling temperature, a few
// readings of a mug's first minutes already show evaporation's bend.
const minPointsWater = 4

// fewWaterMisfit is the least rms misfit, K, of the dry fit to a few readings
// (fitFewWater) for the open-water laws to be tried at all: below it the dry laws
// already fit within a thermocouple logger's noise and resolution (about 0.1 K; common
// practice, no source), and a better fit with one or two readings to spare says
// nothing of evaporation. A solid specimen read four times in a room was taken as
// open water on a 0.034 against 0.021 K misfit (TestFewReadingsNotWaterOnNoise); the
// mugs' first readings miss the dry laws by 0.19–0.84 K.
const fewWaterMisfit = 0.1

// fitFewWater is the h(T) fit of an unknown specimen with fewer than minPointsH
// readings (from minPointsWater), tried only as open water: for a cooling curve that
// starts between waterMinC and waterMaxC with a fitted ambient, the still-air laws
// and then the open-water laws are fitted (fitOpenWater), and an open-water fit that
// wins is returned with its note; else nil, and such a curve gets the lumped
// exponential alone, as every curve with few readings does.
func fitFewWater(p LumpedProblem, lr *LumpedResult, lumpedErr error) (*HResult, string) {
	n := len(p.Times)
	if n < minPointsWater || p.Ambient != nil || p.Celsius[n-1] >= p.Celsius[0] {
		return nil, ""
	}
	if first := p.Celsius[0]; first < waterMinC || first > waterMaxC {
		return nil, ""
	}
	if lumpedErr != nil {
		lr = nil
	}
	dry, start := fitDryStill(p, lr)
	if dry == nil || dry.RMSE < fewWaterMisfit {
		return nil, ""
	}
	wet, note := fitOpenWater(p, start, dry)
	if wet == dry {
		return nil, ""
	}
	return wet, note
}

// fitDryStill fits the still-air h(T) laws of an unknown specimen to p with the room
// prior, starting from the lumped fit lumped, or from a rough start when that is nil;
// it returns the best fit (nil when none succeeds) and the start it used, which the
// open-water laws start from too (fitOpenWater).
func fitDryStill(p LumpedProblem, lumped *LumpedResult) (*HResult, *LumpedResult) {
	start := lumped
	if start == nil {
		start = roughStart(p)
	}
	if start == nil {
		return nil, nil
	}
	still, _ := hCandidates(nil)
	return fitHBest(p, start, still, sharedModels(p, start)), start
}

// guessedWaterHandling leaves every predicted handling target of an unknown specimen
// fitted as open water open-ended — "not before" its early bound, with no central
// estimate and no late end (so no time to plan with, TargetForecast.Due) — and returns
// a note saying why ("" when it changed nothing). In a mug's first minutes the
// open-water law cannot be told from a solid specimen settling toward a warm
// cabinet or hot plate above the handling limit (which the curve never reaches): the
// law's bend and the room prior put the settling temperature at the room's, and the
// limit would get a time that never comes (TestGuessedWaterHandling). Only the
// readings crossing the limit make it reached. A specimen described is not guessed.
// The same holds for a fit that left out a vessel's first minutes (fitAfterVessel,
// HResult.offset), with either law: leaving them out is itself the guess that the
// specimen is hot water in a vessel.
func guessedWaterHandling(tfs []TargetForecast, m fitted, sp *Specimen) string {
	h, ok := m.(hFitted)
	if !ok || sp != nil || h.r.Law.OpenWater == 0 && h.r.offset == 0 {
		return ""
	}
	if !leaveHandlingOpen(tfs) {
		return ""
	}
	what := "to be open water: a solid specimen settling toward a warm surrounding above the limit bends the same way at first"
	if h.r.offset > 0 {
		what = "to be hot water in a vessel whose wall took up heat in the first minutes, which the fit leaves out: a solid specimen's first minutes are part of its cooling"
	}
	return "Handling limits: \"not before\" only, with no time to plan with, while the specimen is only guessed " + what + ". Describe the specimen, or measure the ambient, for a handling time."
}

// leaveHandlingOpen leaves every predicted handling target open-ended, "not before"
// its early bound with no central estimate and no late end, and reports whether it
// changed one.
func leaveHandlingOpen(tfs []TargetForecast) bool {
	changed := false
	for i, tf := range tfs {
		if tf.Target.Handling && tf.State == StatePredicted && !(tf.Latest.IsZero() && tf.At.IsZero()) {
			tfs[i].At, tfs[i].Latest = time.Time{}, time.Time{}
			changed = true
		}
	}
	return changed
}
