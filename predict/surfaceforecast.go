package predict

import "math"

// hFitted adapts a successful HResult for the forecaster.
type hFitted struct{ r *HResult }

func (h hFitted) ambient() float64                 { return h.r.Ambient }
func (h hFitted) side() float64                    { return h.r.table.side }
func (h hFitted) residuals() (rho, misfit float64) { return h.r.Rho, h.r.Misfit }
func (h hFitted) value(t float64) float64          { return h.r.Value(t) }

// crossing is r.offset + t*, t* = (Φ(w0) − Φ(ln|θL|))/q from the fit's own origin,
// with the delta-method variance in (w0, q, T∞). The ambient derivative is (Φa(w0) − Φa(wL))/q at a fixed excess θL
// (a "within" target: a band around the ambient), plus Φ′(wL)/(q·θL) for a fixed
// level, whose excess θL = level − T∞ shrinks as the ambient rises.
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
		tb := r.table
		if tb.phiA == nil { // a fit's table has Φa when its ambient is fitted
			tb = newPhiTable(r.Law, r.Ambient, side, r.tmax, true)
		}
		wL := math.Log(math.Abs(thetaL))
		g[2] = (tb.atA(r.w0) - tb.atA(wL)) / r.q
		if !within {
			g[2] += tb.slopeAt(wL) / (r.q * thetaL)
		}
	}
	for a := range 3 {
		for b := range 3 {
			variance += g[a] * r.Cov.At(a, b) * g[b]
		}
	}
	rate = r.Law.H(level, r.Ambient) * math.Abs(thetaL) * r.q
	return t + r.offset, variance, rate, true
}

func (h hFitted) ambientErr() float64 { return h.r.AmbientErr }

func (h hFitted) rmse() float64 { return h.r.RMSE }
