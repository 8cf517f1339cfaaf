package predict

import (
	"math"
	"sort"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"

	"github.com/settle-lab/settle/predict/surface"
)

// SurfaceLaw is how the surface coefficient depends on the surface temperature:
// free convection by geometry and characteristic length plus grey-body radiation
// (predict/surface.Coefficient).
type SurfaceLaw struct {
	// Geometry and LengthM select the convection correlation (see predict/surface).
	Geometry surface.Geometry
	LengthM  float64
	// Emissivity is the grey-body emissivity, 0..1.
	Emissivity float64
	// ForcedH, when positive, is a constant convective coefficient, W/(m²·K), used
	// instead of the natural-convection correlation: moving air (a fan, a draught, an
	// oven's circulation). Radiation is kept.
	ForcedH float64
	// OpenWater, when positive, is the share of the surface that is open water
	// (hot water in a mug or a beaker): that share also loses heat by evaporation
	// (evaporationH), with the convective coefficient of the rest.
	OpenWater float64
}

// DefaultSurfaceLaw is assumed when the specimen is unknown: a vertical plate 0.1 m
// high with emissivity 0.8 (an oxidised metal or a ceramic; common practice as a
// middle value, not a measurement). The fitted heat capacity per unit area absorbs
// most of the error of a wrong guess.
var DefaultSurfaceLaw = SurfaceLaw{Geometry: surface.VerticalPlate, LengthM: 0.1, Emissivity: 0.8}

// minH keeps the coefficient positive where a correlation gives 0 (zero excess and no
// radiation), W/(m²·K).
const minH = 1e-3

// H returns the surface coefficient, W/(m²·K), at surfaceC in an ambient at ambientC.
func (l SurfaceLaw) H(surfaceC, ambientC float64) float64 {
	var h float64
	if l.OpenWater > 0 {
		h = l.waterH(surfaceC, ambientC)
	} else if l.ForcedH > 0 {
		h = l.ForcedH + surface.Radiation(l.Emissivity, surfaceC, ambientC)
	} else {
		h = surface.Coefficient(l.Geometry, l.LengthM, l.Emissivity, surfaceC, ambientC)
	}
	if !(h > minH) {
		return minH
	}
	return h
}

// hShift returns H(surfaceC, ambientC) (the same number) and its derivative with
// respect to a common shift of both temperatures, dh/dT∞ with the excess held: the
// ambient column of the h(T) fit's Jacobian needs it (see phiTable.atA).
func (l SurfaceLaw) hShift(surfaceC, ambientC float64) (h, dh float64) {
	if l.OpenWater > 0 {
		h, dh = l.waterShift(surfaceC, ambientC)
	} else if l.ForcedH > 0 {
		r, dr := surface.RadiationShift(l.Emissivity, surfaceC, ambientC)
		h, dh = l.ForcedH+r, dr
	} else {
		h, dh = surface.CoefficientShift(l.Geometry, l.LengthM, l.Emissivity, surfaceC, ambientC)
	}
	if !(h > minH) {
		return minH, 0
	}
	return h, dh
}

// The h(T) model: C·dT/dt = −h(T)·(T − T∞), C = ρcV/A the heat capacity per unit area.
// With w = ln|T − T∞| the ODE separates: dw/dt = −h/C. So with
//
//	Φ(w) = ∫ dw / h(T∞ ± e^w)
//
// tabulated once per ambient, the solution is Φ(w(t)) = Φ(w0) − t/C: evaluating the
// integrated ODE at any time is a table inversion, and a crossing time is a table
// look-up, t* = C·(Φ(w0) − Φ(wL)). The table integrates the ODE exactly up to the
// quadrature of Φ (cubic Hermite with the known derivative 1/h at every node).

// phiLow and phiStep fix the Φ table's grid in w = ln|θ|: it starts at θ = 1e-3 K so
// that Φ's origin does not depend on the data.
const (
	phiLow  = -6.907755278982137 // ln 1e-3
	phiStep = 0.04
)

// phiTable tabulates Φ(w) for one ambient and side (+1 above the ambient, −1 below).
// Its nodes are computed lazily, outward from the first one asked for: a fit only
// ever looks at the part of the table its readings span (often a tenth of it), and
// each node costs two evaluations of h(T) (air properties, a cube root). Φ is kept
// relative to that first node, which changes no difference of Φ (all the model uses:
// Φ's origin is arbitrary). A table that leaves the package (an HResult's) is
// completed first (complete), so concurrent readers never extend it.
//
// A table made with the ambient derivative (newPhiTable's deriv) also tabulates
// Φa(w) = ∂Φ/∂T∞ at a fixed excess, the same quadrature and interpolation applied to
// ∂(1/h)/∂T∞ = −(dh/dT∞)/h² (SurfaceLaw.hShift), so Φa is the exact derivative of the
// tabulated Φ: the h(T) fit's ambient column and a crossing's ambient sensitivity
// read it instead of a second table at a shifted ambient.
type phiTable struct {
	amb, side float64
	law       SurfaceLaw
	phi       []float64 // Φ at w = phiLow + i·phiStep, valid for lo <= i <= hi
	inv       []float64 // 1/h at the nodes (dΦ/dw), valid for lo <= i <= hi
	phiA      []float64 // Φa at the nodes, nil without the derivative
	invA      []float64 // ∂(1/h)/∂T∞ at the nodes (dΦa/dw), nil without the derivative
	phiE      []float64 // Φe = ∂Φ/∂ε at the nodes, nil without the emissivity derivative
	invE      []float64 // ∂(1/h)/∂ε at the nodes (dΦe/dw), nil without it
	lo, hi    int       // the computed nodes; lo > hi before the first
}

// phiGrowth is the fewest nodes a table is extended by at a time. Each node costs two
// evaluations of h(T), so the table grows by little more than the nodes asked for
// (a node's value does not depend on how the range grew: each is its neighbour's
// plus one cell).
const phiGrowth = 2

// newPhiTable returns an empty table for law at ambient amb on side, reaching an
// excess of thetaMax; with deriv it also tabulates Φa.
func newPhiTable(law SurfaceLaw, amb, side, thetaMax float64, deriv bool) *phiTable {
	return newPhiTableE(law, amb, side, thetaMax, deriv, false)
}

// newPhiTableE is newPhiTable also tabulating, with emis, Φe(w) = ∂Φ/∂ε: the
// emissivity's column of the h(T) fit that fits it (refineUnknownEmissivity), built
// as Φa is, from ∂(1/h)/∂ε = −(∂h/∂ε)/h² with h affine in ε (∂h/∂ε is radiation's
// coefficient at unit emissivity), so Φe is the exact derivative of the tabulated Φ.
func newPhiTableE(law SurfaceLaw, amb, side, thetaMax float64, deriv, emis bool) *phiTable {
	n := int(math.Ceil((math.Log(max(thetaMax, 1))-phiLow)/phiStep)) + 2
	k := 2
	if deriv {
		k += 2
	}
	if emis {
		k += 2
	}
	buf := make([]float64, k*n)
	tb := &phiTable{amb: amb, side: side, law: law, phi: buf[:n:n], inv: buf[n : 2*n : 2*n], lo: 1, hi: 0}
	j := 2 * n
	if deriv {
		tb.phiA, tb.invA = buf[j:j+n:j+n], buf[j+n:j+2*n:j+2*n]
		j += 2 * n
	}
	if emis {
		tb.phiE, tb.invE = buf[j:j+n:j+n], buf[j+n:j+2*n:j+2*n]
	}
	return tb
}

// invH returns 1/h at an excess ew = e^w and, for a table with the derivatives,
// ∂(1/h)/∂T∞ and ∂(1/h)/∂ε (else 0; ∂(1/h)/∂ε is 0 where h is held at minH).
func (tb *phiTable) invH(ew float64) (inv, invA, invE float64) {
	ts := tb.amb + tb.side*ew
	var h, dh float64
	if tb.phiA == nil {
		h = tb.law.H(ts, tb.amb)
	} else {
		h, dh = tb.law.hShift(ts, tb.amb)
	}
	inv = 1 / h
	if tb.phiE != nil && h > minH {
		invE = -surface.Radiation(1, ts, tb.amb) * inv * inv
	}
	return inv, -dh * inv * inv, invE
}

// node computes node k's 1/h (and its derivatives).
func (tb *phiTable) node(k int) {
	inv, invA, invE := tb.invH(gridExp(k, 0))
	tb.inv[k] = inv
	if tb.phiA != nil {
		tb.invA[k] = invA
	}
	if tb.phiE != nil {
		tb.invE[k] = invE
	}
}

// cell returns the integral of 1/h over cell i (nodes i and i+1), by Simpson's rule
// with the nodes' values and the midpoint's, and those of ∂(1/h)/∂T∞ and ∂(1/h)/∂ε
// (0 without the derivative).
func (tb *phiTable) cell(i int) (c, cA, cE float64) {
	mid, midA, midE := tb.invH(gridExp(i, 1))
	c = phiStep * (tb.inv[i] + 4*mid + tb.inv[i+1]) / 6
	if tb.phiA != nil {
		cA = phiStep * (tb.invA[i] + 4*midA + tb.invA[i+1]) / 6
	}
	if tb.phiE != nil {
		cE = phiStep * (tb.invE[i] + 4*midE + tb.invE[i+1]) / 6
	}
	return c, cA, cE
}

// ensure computes the nodes from i to j (clamped to the table), extending the
// computed range by at least phiGrowth nodes at a time.
func (tb *phiTable) ensure(i, j int) {
	n := len(tb.phi)
	i, j = max(i, 0), min(j, n-1)
	deriv, emis := tb.phiA != nil, tb.phiE != nil
	if tb.lo > tb.hi {
		tb.lo, tb.hi = i, i
		tb.node(i)
		tb.phi[i] = 0
		if deriv {
			tb.phiA[i] = 0
		}
		if emis {
			tb.phiE[i] = 0
		}
	}
	if i < tb.lo {
		to := max(0, min(i, tb.lo-phiGrowth))
		for k := tb.lo - 1; k >= to; k-- {
			tb.node(k)
			c, cA, cE := tb.cell(k)
			tb.phi[k] = tb.phi[k+1] - c
			if deriv {
				tb.phiA[k] = tb.phiA[k+1] - cA
			}
			if emis {
				tb.phiE[k] = tb.phiE[k+1] - cE
			}
		}
		tb.lo = to
	}
	if j > tb.hi {
		to := min(n-1, max(j, tb.hi+phiGrowth))
		for k := tb.hi + 1; k <= to; k++ {
			tb.node(k)
			c, cA, cE := tb.cell(k - 1)
			tb.phi[k] = tb.phi[k-1] + c
			if deriv {
				tb.phiA[k] = tb.phiA[k-1] + cA
			}
			if emis {
				tb.phiE[k] = tb.phiE[k-1] + cE
			}
		}
		tb.hi = to
	}
}

// complete computes every node.
func (tb *phiTable) complete() { tb.ensure(0, len(tb.phi)-1) }

// at returns Φ(w), with the end slopes continued beyond the table.
func (tb *phiTable) at(w float64) float64 { return tb.interpolate(tb.phi, tb.inv, w) }

// atA returns Φa(w) = ∂Φ/∂T∞ at a fixed excess, continued beyond the table as at
// continues Φ (so it is the derivative of at); the table must have the derivative.
func (tb *phiTable) atA(w float64) float64 { return tb.interpolate(tb.phiA, tb.invA, w) }

// atE returns Φe(w) = ∂Φ/∂ε, continued beyond the table as at continues Φ; the table
// must have the emissivity derivative.
func (tb *phiTable) atE(w float64) float64 { return tb.interpolate(tb.phiE, tb.invE, w) }

// interpolate evaluates the interpolant of node values v with node slopes d (Φ and
// 1/h, or Φa and its slope) at w, computing the nodes it needs.
func (tb *phiTable) interpolate(v, d []float64, w float64) float64 {
	x := (w - phiLow) / phiStep
	n := len(tb.phi)
	switch {
	case x <= 0:
		tb.ensure(0, 0)
		return v[0] + (w-phiLow)*d[0]
	case x >= float64(n-1):
		tb.ensure(n-1, n-1)
		return v[n-1] + (w-phiLow-float64(n-1)*phiStep)*d[n-1]
	}
	i := int(x)
	if i < tb.lo || i >= tb.hi { // ensure is not inlined: skip the call when computed
		tb.ensure(i, i+1)
	}
	return cellHermite(v, d, i, x-float64(i))
}

// slopeAt returns dΦ/dw of the interpolant at w (the end slopes beyond the table).
func (tb *phiTable) slopeAt(w float64) float64 {
	x := (w - phiLow) / phiStep
	n := len(tb.phi)
	switch {
	case x <= 0:
		tb.ensure(0, 0)
		return tb.inv[0]
	case x >= float64(n-1):
		tb.ensure(n-1, n-1)
		return tb.inv[n-1]
	}
	i := int(x)
	tb.ensure(i, i+1)
	return tb.slope(i, x-float64(i)) / phiStep
}

// hermite evaluates the cubic Hermite interpolant of cell i at fraction s.
func (tb *phiTable) hermite(i int, s float64) float64 { return cellHermite(tb.phi, tb.inv, i, s) }

// cellHermite evaluates at fraction s of cell i the cubic Hermite interpolant of node
// values v with slopes d per unit w.
func cellHermite(v, d []float64, i int, s float64) float64 {
	s2, s3 := s*s, s*s*s
	return (2*s3-3*s2+1)*v[i] + (s3-2*s2+s)*phiStep*d[i] +
		(-2*s3+3*s2)*v[i+1] + (s3-s2)*phiStep*d[i+1]
}

// cover extends the computed nodes until they bracket f (or reach an end of the
// table), so that f can be inverted; the table must have a node.
func (tb *phiTable) cover(f float64) {
	for tb.lo > 0 && f < tb.phi[tb.lo] {
		tb.ensure(tb.lo-phiGrowth, tb.hi)
	}
	for tb.hi < len(tb.phi)-1 && f > tb.phi[tb.hi] {
		tb.ensure(tb.lo, tb.hi+phiGrowth)
	}
}

// invert returns the w with Φ(w) = f and h there (from the interpolant's slope); hint is a cell index to start
// from (the previous answer when walking a time series), updated in place.
func (tb *phiTable) invert(f float64, hint *int) (w, h float64) {
	w, h, _, _, _ = tb.solve(f, hint)
	return w, h
}

// solve is invert also returning e^w (the excess |θ|), from the cell's node and
// fraction (expCell) instead of math.Exp where the table holds w, and the cell and
// its fraction s (cell −1 beyond the table's ends, where w is extrapolated).
func (tb *phiTable) solve(f float64, hint *int) (w, h, ew float64, cell int, s float64) {
	n := len(tb.phi)
	if tb.lo > tb.hi {
		tb.ensure(n/2, n/2)
	}
	if f < tb.phi[tb.lo] || f > tb.phi[tb.hi] { // cover is not inlined
		tb.cover(f)
	}
	if tb.lo == 0 && f <= tb.phi[0] {
		w = phiLow + (f-tb.phi[0])/tb.inv[0]
		return w, 1 / tb.inv[0], math.Exp(w), -1, 0
	}
	if tb.hi == n-1 && f >= tb.phi[n-1] {
		w = phiLow + float64(n-1)*phiStep + (f-tb.phi[n-1])/tb.inv[n-1]
		return w, 1 / tb.inv[n-1], math.Exp(w), -1, 0
	}
	i := *hint
	if i < tb.lo || i >= tb.hi || !(tb.phi[i] <= f && f <= tb.phi[i+1]) {
		if i >= tb.lo && i < tb.hi-1 && tb.phi[i+1] <= f && f <= tb.phi[i+2] {
			i++
		} else if i > tb.lo && i <= tb.hi && tb.phi[i-1] <= f && f <= tb.phi[i] {
			i--
		} else {
			i = tb.lo + max(0, min(sort.SearchFloat64s(tb.phi[tb.lo:tb.hi+1], f)-1, tb.hi-tb.lo-1))
		}
	}
	*hint = i
	// Newton on the cell's cubic from the cubic Hermite interpolant of the inverse
	// (s at the cell's ends is 0 and 1, ds/dΦ there 1/(phiStep·Φ')), which is within
	// about 1e-7 of the root, so that one step brings it to rounding; Φ' = 1/h > 0.
	// Newton converges quadratically: after a step under 1e-8 of a cell the error
	// left is of order 1e-16, so it stops there (at most 4 steps).
	df, e := tb.phi[i+1]-tb.phi[i], f-tb.phi[i]
	m0, m1 := phiStep*tb.inv[i], phiStep*tb.inv[i+1]
	s = unit(hermiteAt(e/df, 0, 1, 0, 1, df/m0, df/m1))
	// The cell's cubic in powers of s, Φ(s) − Φ_i = s·(m0 + s·(c2 + s·c3)) (the
	// Hermite interpolant with end slopes m0, m1 per cell), evaluated against
	// e = f − Φ_i so that Φ's offset from its origin does not enter the rounding.
	// Newton's next correction would be about Φ''/(2Φ')·step²; the cubic's |Φ''| is
	// largest at an end of the cell (it is linear in s). Once that correction is
	// under 1e-14 of a cell (w within 4e-16, about an ulp of θ) the iteration stops
	// without the evaluation that would confirm it.
	c2, c3 := 3*df-2*m0-m1, m0+m1-2*df
	curv := max(math.Abs(2*c2), math.Abs(2*c2+6*c3))
	for range 4 {
		d := s*(m0+s*(c2+s*c3)) - e
		ds := m0 + s*(2*c2+3*s*c3)
		next := unit(s - d/ds)
		step := math.Abs(next - s)
		s = next
		if step < 1e-8 || curv*step*step < 2e-14*ds {
			break
		}
	}
	w = phiLow + (float64(i)+s)*phiStep
	// h = 1/(dΦ/dw) of the interpolant itself, so the Jacobian is the derivative of
	// the curve as computed.
	return w, phiStep / (m0 + s*(2*c2+3*s*c3)), expCell(i, s), i, s
}

// cellA returns Φa at fraction s of computed cell i (the Hermite cubic of atA, in
// powers of s).
func (tb *phiTable) cellA(i int, s float64) float64 { return cellCubic(tb.phiA, tb.invA, i, s) }

// cellE returns Φe at fraction s of computed cell i, as cellA does Φa.
func (tb *phiTable) cellE(i int, s float64) float64 { return cellCubic(tb.phiE, tb.invE, i, s) }

// cellCubic evaluates at fraction s of cell i the Hermite cubic of node values v with
// slopes d per unit w, in powers of s.
func cellCubic(v, d []float64, i int, s float64) float64 {
	v, d = v[i:i+2:i+2], d[i:i+2:i+2]
	df, m0, m1 := v[1]-v[0], phiStep*d[0], phiStep*d[1]
	return v[0] + s*(m0+s*((3*df-2*m0-m1)+s*(m0+m1-2*df)))
}

// expGridNodes is how many of the Φ grid's nodes expGrid holds: w up to 18.6, an
// excess of 1.2e8 K, far beyond any table.
const expGridNodes = 640

// expGrid holds e^w at the Φ grid's nodes w = phiLow + i·phiStep.
var expGrid = func() (g [expGridNodes]float64) {
	for i := range g {
		g[i] = math.Exp(phiLow + float64(i)*phiStep)
	}
	return g
}()

// expMid holds e^w at the midpoints of the Φ grid's cells, w = phiLow + (i + ½)·phiStep.
var expMid = func() (g [expGridNodes]float64) {
	for i := range g {
		g[i] = math.Exp(phiLow + (float64(i)+0.5)*phiStep)
	}
	return g
}()

// gridExp returns math.Exp(phiLow + (i + half/2)·phiStep) for half 0 (node i) or 1
// (cell i's midpoint), the same number, from expGrid and expMid.
func gridExp(i, half int) float64 {
	if uint(i) >= expGridNodes {
		return math.Exp(phiLow + (float64(i)+0.5*float64(half))*phiStep)
	}
	if half == 0 {
		return expGrid[i]
	}
	return expMid[i]
}

// expCell returns e^w at w = phiLow + (i + s)·phiStep, 0 ≤ s ≤ 1: the node's e^w times
// e^x, x = s·phiStep ≤ 0.04, by its Taylor series to x⁸ (the rest is below 1e-18
// relative; the powers paired, Estrin's scheme, for a short dependency chain), within
// a few ulps of math.Exp at less cost; math.Exp off the grid.
func expCell(i int, s float64) float64 {
	if uint(i) >= expGridNodes {
		return math.Exp(phiLow + (float64(i)+s)*phiStep)
	}
	x := s * phiStep
	x2 := x * x
	x4 := x2 * x2
	lo := (1 + x) + x2*(1.0/2+x*(1.0/6))
	hi := (1.0/24 + x*(1.0/120)) + x2*(1.0/720+x*(1.0/5040))
	return expGrid[i] * (lo + x4*(hi+x4*(1.0/40320)))
}

// unit clamps s to [0, 1] (NaN stays NaN): max(0, min(1, s)) without the builtins'
// ordering of signed zeros, which costs more and which no caller needs.
func unit(s float64) float64 {
	if s < 0 {
		return 0
	}
	if s > 1 {
		return 1
	}
	return s
}

// slope returns dΦ/ds of cell i's cubic (s the cell fraction).
func (tb *phiTable) slope(i int, s float64) float64 {
	s2 := s * s
	return (6*s2-6*s)*tb.phi[i] + (3*s2-4*s+1)*phiStep*tb.inv[i] +
		(-6*s2+6*s)*tb.phi[i+1] + (3*s2-2*s)*phiStep*tb.inv[i+1]
}

// HResult is the outcome of FitH, the lumped model with a temperature-dependent
// surface coefficient.
type HResult struct {
	// Status says whether the fit succeeded.
	Status FitStatus
	// Law is the surface law used.
	Law SurfaceLaw
	// Ambient is the settling temperature, °C (fitted, or the measured reference).
	Ambient float64
	// Initial is the fitted temperature at t = 0, °C.
	Initial float64
	// Capacity is the fitted heat capacity per unit area C = ρcV/A divided by the
	// coefficient's scale factor, J/(m²·K); CapacityErr its standard error.
	Capacity, CapacityErr float64
	// InitialErr and AmbientErr are standard errors (AmbientErr 0 when measured).
	InitialErr, AmbientErr float64
	// Cov is the covariance of (w0 = ln|T0 − T∞|, q = 1/C, ambient); rows of a
	// measured ambient are 0.
	Cov *mat.SymDense
	// N, Free, RMSE, Sigma, Rho, Misfit are as in LumpedResult.
	N, Free                  int
	RMSE, Sigma, Rho, Misfit float64

	w0, phi0, q float64
	table       *phiTable
	tmax        float64
	// objective is the fit's objective, the sum of squares of every reading plus the
	// ambient prior's penalty at weight priorW2; capped says the iterations ran out
	// before converging (retryFromPrior).
	objective, priorW2 float64
	capped             bool
	// offset is the time, s from the segment start, of the first reading the fit
	// used, where its own time origin lies: 0 but for a fit that left out a vessel's
	// transient (fitAfterVessel). Value and the crossings are in segment time.
	offset float64
	// shareFitted says radiation's share of a moving-air law was fitted
	// (refineMovingShare): a parameter more than Free counts against the lumped
	// exponential (chooseH).
	shareFitted bool
	// hint is the table cell of the latest Value, where the next one usually lies
	// (callers walk a curve in time); read and written atomically, since Value may
	// run on several goroutines, and only a starting guess for invert.
	hint int32
}

// Value evaluates the fitted curve at t seconds from the segment start.
func (r *HResult) Value(t float64) float64 {
	hint := int(atomic.LoadInt32(&r.hint))
	_, _, ew, _, _ := r.table.solve(r.phi0-r.q*(t-r.offset), &hint)
	atomic.StoreInt32(&r.hint, int32(hint))
	return r.Ambient + r.table.side*ew
}

// HAt returns the fitted model's surface coefficient h(T)/scale at a temperature: the
// coefficient that, with the true ρcV/A, reproduces the fitted rates.
func (r *HResult) HAt(celsius float64) float64 {
	return r.Law.H(celsius, r.Ambient)
}

// crossing returns the time the fitted curve reaches an excess θL (same side as the
// fit) over the ambient of table tb, with parameters phi0, q.
func crossingH(tb *phiTable, phi0, q, thetaL float64) float64 {
	return (phi0 - tb.at(math.Log(math.Abs(thetaL)))) / q
}

// hModel evaluates the h(T) model and its Jacobian for a problem.
type hModel struct {
	ts, y    []float64 // times and readings (adjusted to the reference ambient when measured)
	law      SurfaceLaw
	side     float64
	tmax     float64 // table extent, K
	measured bool
	amb      float64 // the measured reference ambient

	th []float64 // each reading's θ·h at the last Jacobian
	wt []float64 // each point's weight (the square root of a bin's count), nil for 1
}

// residuals fills r with y − model at (w0, q, amb) and, when jac is non-nil, its
// rows with ∂model/∂(w0, q) and, for a table with the ambient derivative (a fitted
// ambient), ∂model/∂T∞, and m.th with each reading's θ·h. It returns the sum of
// squares, or stops at the first partial sum above limit and returns that.
//
// The ambient column: with Φ(w; T∞) − Φ(w0; T∞) = −q·t, a change of T∞ at a fixed
// excess moves w by ∂w/∂T∞ = h·(Φa(w0) − Φa(w)), Φa = ∂Φ/∂T∞ tabulated beside Φ
// (phiTable.atA); so ∂T/∂T∞ = 1 + θ·h·(Φa(w0) − Φa(w)), read in the cell the
// reading's inversion found. A table with the emissivity derivative and a Jacobian
// with a column more than the ambient needs fill its last column with ∂model/∂ε, the
// same way from Φe (phiTable.atE).
func (m *hModel) residuals(tb *phiTable, w0, q float64, r []float64, jac *mat.Dense, limit float64) float64 {
	var ssr float64
	phi0 := tb.at(w0)
	h0 := tb.law.H(tb.amb+tb.side*math.Exp(w0), tb.amb)
	hint := -1
	var jd []float64 // jac's rows, written directly (Dense.Set checks every index)
	var js int
	var da0, de0 float64
	deriv := false
	ec := 0 // the emissivity's column, 0 for none
	if jac != nil {
		if m.th == nil {
			m.th = make([]float64, len(m.ts))
		}
		raw := jac.RawMatrix()
		jd, js = raw.Data, raw.Stride
		if deriv = raw.Cols >= 3 && tb.phiA != nil; deriv {
			da0 = tb.atA(w0)
		}
		if tb.phiE != nil && raw.Cols > 2 && (raw.Cols > 3 || !deriv) {
			ec = raw.Cols - 1
			de0 = tb.atE(w0)
		}
	}
	for i, t := range m.ts {
		w, h, ew, cell, s := tb.solve(phi0-q*t, &hint)
		theta := m.side * ew
		wt := 1.0
		if m.wt != nil {
			wt = m.wt[i]
		}
		r[i] = wt * (m.y[i] - (tb.amb + theta))
		ssr += r[i] * r[i]
		if ssr > limit {
			return ssr
		}
		if jac != nil {
			// dT/dw = θ, dw/dΦ = h, dΦ0/dw0 = 1/h0.
			jd[i*js], jd[i*js+1] = wt*theta*h/h0, -wt*theta*h*t
			m.th[i] = wt * theta * h
			if deriv {
				var fa float64
				if cell >= 0 {
					fa = tb.cellA(cell, s)
				} else {
					fa = tb.atA(w)
				}
				jd[i*js+2] = wt + m.th[i]*(da0-fa)
			}
			if ec > 0 {
				// As for T∞: ∂w/∂ε = h·(Φe(w0) − Φe(w)) at a fixed initial excess.
				var fe float64
				if cell >= 0 {
					fe = tb.cellE(cell, s)
				} else {
					fe = tb.atE(w)
				}
				jd[i*js+ec] = m.th[i] * (de0 - fe)
			}
		}
	}
	return ssr
}
