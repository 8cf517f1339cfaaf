package predict

import "math"

// hFitted adapts a successful HResult for the forecaster.
type hFitted struct{ r *HResult }

func (h hFitted) ambient() float64                 { return h.r.Ambient }
func (h hFitted) side() float64                    { return h.r.table.side }
func (h hFitted) residuals() (rho, misfit float64) { return h.r.Rho, h.r.Misfit }
func (h hFitted) value(t float64) float64          { return h.r.Value(t) }

// crossing is t* = (Φ(w0) − Φ(ln|θL|))/q with the delta-method variance in
// (w0, q, T∞); the ambient derivative is a finite difference over a shifted table.
func (h hFitted) crossing(level float64, within bool) (t, variance, rate float64, ok bool) {
	r := h.r
	side := r.table.side
	thetaL := level - r.Ambient
	if sign(thetaL) != side {
		return 0, 0, 0, false
	}
	t = crossingH(r.table, r.phi0, r.q, thetaL)
	h0 := r.Law.H(r.Initial, r.Ambient)
	g := [3]float64{1 / (h0 * r.q), -t / r.q, 0}
	if r.AmbientErr > 0 {
		tb := newPhiTable(r.Law, r.Ambient+ambDelta, side, r.tmax)
		shifted := thetaL - ambDelta
		if within {
			shifted = thetaL
		}
		if sign(shifted) == side {
			g[2] = (crossingH(tb, tb.at(r.w0), r.q, shifted) - t) / ambDelta
		}
	}
	for a := range 3 {
		for b := range 3 {
			variance += g[a] * r.Cov.At(a, b) * g[b]
		}
	}
	rate = r.Law.H(level, r.Ambient) * math.Abs(thetaL) * r.q
	return t, variance, rate, true
}

func (h hFitted) ambientErr() float64 { return h.r.AmbientErr }

func (h hFitted) rmse() float64 { return h.r.RMSE }
