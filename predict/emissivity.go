package predict

import (
	"fmt"
	"math"

	"github.com/settle-lab/settle/predict/material"
)

// The h(T) fit scales one factor on h = h_conv + h_rad, so a wrong emissivity bends
// the whole curve: too low, and the fitted convection is too strong near room
// temperature, where radiation has faded, so the forecast of a low target comes
// early. When the curve spans a wide temperature range the two parts leave different
// marks on its shape, and the emissivity is fitted with them.

// wideSpanK is the fewest kelvin between the first reading and the ambient for the
// emissivity to be fitted: radiation's share of h changes by a factor of about two
// over such a span.
const wideSpanK = 150

// emissivityGrid is the number of emissivities tried across the prior's bounds.
const emissivityGrid = 7

// emissivityPrior returns the specimen's emissivity prior: its emissivity as the
// mean, half the width of its material's finish range as the standard deviation
// (0.15 without a named material), and physical bounds a little wider than the range.
func (s *Specimen) emissivityPrior() (mean, sd, lo, hi float64) {
	mean, sd = s.Material.Emissivity, 0.15
	lo, hi = 0.02, 0.98
	if ref, ok := material.Lookup(s.Material.Name); ok {
		finish := s.Material.Finish
		if finish == "" {
			finish = "oxidised"
		}
		if r, ok := ref.Finish(finish); ok {
			sd = max((r.Hi-r.Lo)/2, 0.05)
			lo, hi = max(0.02, r.Lo-0.1), min(0.98, r.Hi+0.1)
		}
	}
	return mean, sd, min(lo, mean), max(hi, mean)
}

// fitEmissivity refits the h(T) model r (the specimen's still-air or moving-air law)
// with the emissivity free within the prior's bounds, keeping the emissivity that
// minimises the criterion n_eff·ln(RMSE²) + ((ε − mean)/sd)² (readings counted by
// their effective number, as correlated residuals carry less evidence). It returns
// the refit and a note, or r and "" when the curve is not wide enough or no refit
// does better.
func fitEmissivity(p LumpedProblem, start *LumpedResult, r *HResult, sp *Specimen) (*HResult, string) {
	if sp == nil || r == nil || math.Abs(r.Initial-r.Ambient) < wideSpanK {
		return r, ""
	}
	mean, sd, lo, hi := sp.emissivityPrior()
	rho := max(r.Rho, 0)
	nEff := float64(r.N) * (1 - rho) / (1 + rho)
	score := func(h *HResult) float64 {
		d := (h.Law.Emissivity - mean) / sd
		return nEff*math.Log(max(h.RMSE*h.RMSE, 1e-300)) + d*d
	}
	best, bestScore := r, score(r)
	for i := range emissivityGrid {
		law := r.Law
		law.Emissivity = lo + (hi-lo)*float64(i)/float64(emissivityGrid-1)
		h := fitHBest(p, start, []SurfaceLaw{law})
		if h != nil && score(h) < bestScore {
			best, bestScore = h, score(h)
		}
	}
	if best == r {
		return r, fmt.Sprintf("Emissivity %.2g kept: over this %.0f K span the curve does not favour another within %.2g–%.2g.",
			r.Law.Emissivity, math.Abs(r.Initial-r.Ambient), lo, hi)
	}
	return best, fmt.Sprintf(
		"Emissivity fitted from the curve's shape over its %.0f K span: %.2g (the specimen's %.2g as the prior, ±%.2g, bounds %.2g–%.2g); radiation and convection fitted separately.",
		math.Abs(r.Initial-r.Ambient), best.Law.Emissivity, mean, sd, lo, hi)
}
