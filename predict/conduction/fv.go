package conduction

import (
	"errors"
	"fmt"
	"math"
)

// DefaultCells is the number of cells FV uses across Size when Cells is 0.
const DefaultCells = 24

// maxSteps bounds one FV run (a guard against a step control that never grows).
const maxSteps = 1_000_000

// FV is a one-dimensional finite-volume model of transient conduction in a slab,
// an infinite cylinder or a sphere with a surface coefficient that may depend on
// the surface temperature, h(Ts) (natural convection plus radiation, see
// HeatLoss), for hot and thick specimens where neither the constant-h series nor
// the lumped model holds.
//
// The grid is vertex-centred: Cells+1 nodes at r = i·Size/Cells, node 0 at the
// centre (symmetry, no flux) and node Cells on the surface with a half cell, so the
// centre and surface temperatures are node values and the volume mean is the
// volume-weighted node sum (the quantity the scheme conserves). The scheme is
// second order in space.
//
// Time stepping is implicit: Crank–Nicolson, with the first four steps backward
// Euler to damp the high modes excited by the sudden start (Rannacher's
// start-up). The surface flux q(Ts) = h(Ts)·(Ts − T∞) is linearised about the
// start of each step (one Newton step, with dq/dTs by a forward difference), which
// keeps the scheme second order in time without inner iterations. Each step solves
// one tridiagonal system by the Thomas algorithm written here: gonum has no banded
// solver that fits (mat.BandDense has no factorisation; a dense LU would be
// O(n³) per step for an O(n) problem).
//
// The step starts at Step.First·Δ²/α (Δ = Size/Cells), grows by Step.Growth per
// step, and is capped at Step.Rate divided by an upper bound on the slowest
// mode's decay rate, min((m+1)·Bi, ζ∞²)·α/Size² (m = 0, 1, 2 for slab, cylinder,
// sphere; ζ∞ = π/2, 2.405, π), with Bi taken from the largest h among the initial
// temperature, mid-way and near ambient. The schedule is fixed for a run, so a
// fitted curve is a smooth function of its parameters.
type FV struct {
	// Shape is Slab, Cylinder or Sphere.
	Shape Shape
	// Size is the half-thickness L or radius r0, m.
	Size float64
	// Conductivity is k, W/(m·K).
	Conductivity float64
	// Diffusivity is α = k/(ρ·c), m²/s.
	Diffusivity float64
	// Ambient is T∞, °C.
	Ambient float64
	// H returns the surface coefficient, W/(m²·K) (>= 0, finite), at the surface
	// temperature in °C. Required; ConstantH makes a constant one.
	H func(surfaceC float64) float64
	// Cells is the number of cells across Size (0: DefaultCells).
	Cells int
	// Step controls the time step; its zero value gives the defaults.
	Step StepControl
}

// StepControl sets the FV time step. Every zero field takes its default.
type StepControl struct {
	// First is the first step as a fraction of the cell diffusion time Δ²/α
	// (default 0.02).
	First float64
	// Growth is the factor by which each step exceeds the last (default 1.1).
	Growth float64
	// Rate is the largest step times the slowest-mode decay-rate bound (default
	// 0.05; the time error is then below about 2e-4 of θi, under the space error
	// of DefaultCells).
	Rate float64
}

// ConstantH returns an h(Ts) that is h everywhere, for FV's constant-h mode.
func ConstantH(h float64) func(float64) float64 { return func(float64) float64 { return h } }

// ErrFV is matched (errors.Is) by every error FV.Run returns.
var ErrFV = errors.New("conduction: invalid finite-volume model")

func (m *FV) check() error {
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: %s", ErrFV, fmt.Sprintf(format, a...))
	}
	switch {
	case !m.Shape.OneDimensional():
		return bad("shape %v is not one-dimensional", m.Shape)
	case !(m.Size > 0) || !(m.Conductivity > 0) || !(m.Diffusivity > 0):
		return bad("size, conductivity and diffusivity must be > 0, got %g, %g, %g", m.Size, m.Conductivity, m.Diffusivity)
	case m.H == nil:
		return bad("no surface coefficient function H")
	case m.Cells < 0 || m.Cells == 1:
		return bad("cells must be 0 (default) or at least 2, got %d", m.Cells)
	case math.IsNaN(m.Ambient) || math.IsInf(m.Ambient, 0):
		return bad("ambient must be finite, got %g", m.Ambient)
	}
	return nil
}

// Run solves from a uniform initial temperature initialC (°C) at t = 0 to until
// seconds and returns the trajectory: every node at every step.
func (m *FV) Run(initialC, until float64) (*Trajectory, error) {
	if err := m.check(); err != nil {
		return nil, err
	}
	if !(until > 0) || math.IsInf(until, 0) || math.IsNaN(initialC) {
		return nil, fmt.Errorf("%w: need until > 0 and a finite initial temperature, got %g and %g", ErrFV, until, initialC)
	}
	g := newGrid(m)
	sched := g.schedule(initialC, until)
	tr := &Trajectory{grid: g, ambient: m.Ambient}
	g.run(initialC, sched, func(t float64, T []float64) {
		tr.Times = append(tr.Times, t)
		tr.nodes = append(tr.nodes, T...)
		tr.mean = append(tr.mean, g.mean(T))
	})
	return tr, nil
}

// grid is an FV model discretised: node volumes and face conductances (both over
// the common factor 1, 2π or 4π, which cancels), divided so that
//
//	cap[i]·dT[i]/dt = Σ cond·(T[j] − T[i]) − [i = n]·area·q(T[n])/k.
type grid struct {
	m      *FV
	cells  int
	dx     float64
	cap    []float64 // node volume / α
	cond   []float64 // face i between node i and i+1: area / Δ
	area   float64   // surface area / k
	volume float64   // total volume
	vol    []float64 // node volumes
	// scratch for a step
	lower, diag, upper, rhs, work []float64
}

func newGrid(m *FV) *grid {
	n := m.Cells
	if n == 0 {
		n = DefaultCells
	}
	g := &grid{m: m, cells: n, dx: m.Size / float64(n)}
	exp := float64(m.Shape) // 0, 1, 2: the power of r in the area
	vol := func(a, b float64) float64 {
		return (math.Pow(b, exp+1) - math.Pow(a, exp+1)) / (exp + 1)
	}
	g.vol, g.cap, g.cond = make([]float64, n+1), make([]float64, n+1), make([]float64, n)
	for i := range n + 1 {
		a := math.Max(0, (float64(i)-0.5)*g.dx)
		b := math.Min(m.Size, (float64(i)+0.5)*g.dx)
		g.vol[i] = vol(a, b)
		g.cap[i] = g.vol[i] / m.Diffusivity
		g.volume += g.vol[i]
		if i < n {
			g.cond[i] = math.Pow((float64(i)+0.5)*g.dx, exp) / g.dx
		}
	}
	g.area = math.Pow(m.Size, exp) / m.Conductivity
	for _, s := range []*[]float64{&g.lower, &g.diag, &g.upper, &g.rhs, &g.work} {
		*s = make([]float64, n+1)
	}
	return g
}

// steps returns the StepControl with defaults filled in.
func (g *grid) steps() (first, growth, rate float64) {
	s := g.m.Step
	first, growth, rate = s.First, s.Growth, s.Rate
	if first <= 0 {
		first = 0.02
	}
	if growth <= 1 {
		growth = 1.1
	}
	if rate <= 0 {
		rate = 0.05
	}
	return first * g.dx * g.dx / g.m.Diffusivity, growth, rate
}

// slowestRateBound returns the decay-rate bound min((m+1)·Bi, ζ∞²)·α/Size² (1/s)
// for the largest h between initialC and the ambient.
func (g *grid) slowestRateBound(initialC float64) float64 {
	m := g.m
	h := 0.0
	for _, f := range []float64{1, 0.5, 0.01} {
		h = math.Max(h, m.H(m.Ambient+f*(initialC-m.Ambient)))
	}
	bi := h * m.Size / m.Conductivity
	zInf := [...]float64{math.Pi / 2, 2.404825557695773, math.Pi}[m.Shape]
	return math.Min((float64(m.Shape)+1)*bi, zInf*zInf) * m.Diffusivity / (m.Size * m.Size)
}

// schedule returns the step end times from the first step to until.
func (g *grid) schedule(initialC, until float64) []float64 {
	dt, growth, rate := g.steps()
	dtMax := math.Inf(1)
	if r := g.slowestRateBound(initialC); r > 0 {
		dtMax = rate / r
	}
	dt = math.Min(dt, dtMax)
	var out []float64
	for t := 0.0; t < until && len(out) < maxSteps; {
		t = math.Min(t+dt, until)
		if until-t < 0.25*dt { // do not leave a sliver
			t = until
		}
		out = append(out, t)
		dt = math.Min(dt*growth, dtMax)
	}
	return out
}

// run steps from a uniform initialC through the schedule, calling visit at t = 0
// and after every step with the node temperatures (valid only during the call).
func (g *grid) run(initialC float64, sched []float64, visit func(t float64, T []float64)) {
	T := make([]float64, g.cells+1)
	for i := range T {
		T[i] = initialC
	}
	visit(0, T)
	prev := 0.0
	for k, t := range sched {
		w := 0.5
		if k < 4 {
			w = 1
		}
		g.step(T, t-prev, w)
		prev = t
		visit(t, T)
	}
}

// step advances T by dt with the θ-method weight w (1 backward Euler, ½
// Crank–Nicolson), solving for the change δ:
//
//	(cap/dt − w·A + w·area·q'·e_n) δ = A·T − area·q·e_n.
func (g *grid) step(T []float64, dt, w float64) {
	n := g.cells
	q, dq := g.flux(T[n])
	for i := range n + 1 {
		lo, up, flow := 0.0, 0.0, 0.0
		if i > 0 {
			lo = g.cond[i-1]
			flow += lo * (T[i-1] - T[i])
		}
		if i < n {
			up = g.cond[i]
			flow += up * (T[i+1] - T[i])
		}
		g.lower[i], g.upper[i] = -w*lo, -w*up
		g.diag[i] = g.cap[i]/dt + w*(lo+up)
		g.rhs[i] = flow
	}
	g.diag[n] += w * g.area * dq
	g.rhs[n] -= g.area * q
	thomas(g.lower, g.diag, g.upper, g.rhs, g.work)
	for i := range T {
		T[i] += g.rhs[i]
	}
}

// flux returns q = h(Ts)·(Ts − T∞) and dq/dTs by a forward difference.
func (g *grid) flux(ts float64) (q, dq float64) {
	m := g.m
	q = m.H(ts) * (ts - m.Ambient)
	d := 1e-4 * math.Max(1, math.Abs(ts-m.Ambient))
	q2 := m.H(ts+d) * (ts + d - m.Ambient)
	return q, (q2 - q) / d
}

// mean returns the volume-mean temperature of the node values T.
func (g *grid) mean(T []float64) float64 {
	s := 0.0
	for i, v := range g.vol {
		s += v * T[i]
	}
	return s / g.volume
}

// sample returns the temperature at position p (linear between nodes) or the
// volume mean.
func (g *grid) sample(T []float64, p Position) float64 {
	if p == VolumeMean {
		return g.mean(T)
	}
	x := float64(p) * float64(g.cells)
	i := int(x)
	if i >= g.cells {
		return T[g.cells]
	}
	f := x - float64(i)
	return T[i] + f*(T[i+1]-T[i])
}

// thomas solves the tridiagonal system (lower, diag, upper)·x = rhs in place: rhs
// holds x on return; work is scratch of the same length. The matrices FV builds are
// diagonally dominant, so no pivoting is needed.
func thomas(lower, diag, upper, rhs, work []float64) {
	n := len(diag)
	work[0] = upper[0] / diag[0]
	rhs[0] /= diag[0]
	for i := 1; i < n; i++ {
		den := diag[i] - lower[i]*work[i-1]
		work[i] = upper[i] / den
		rhs[i] = (rhs[i] - lower[i]*rhs[i-1]) / den
	}
	for i := n - 2; i >= 0; i-- {
		rhs[i] -= work[i] * rhs[i+1]
	}
}

// Trajectory is an FV solution: every node at every step.
type Trajectory struct {
	// Times are the step times, s, from 0.
	Times   []float64
	grid    *grid
	ambient float64
	nodes   []float64 // step k, node i at k·(cells+1)+i
	mean    []float64
}

// At returns the temperature (°C) at position p and time t (s), linear in time
// between steps and in space between nodes. Before 0 it is the initial value;
// after the last step it decays toward the ambient at the rate of the last step.
func (tr *Trajectory) At(p Position, t float64) float64 {
	n := len(tr.Times)
	val := func(k int) float64 {
		if p == VolumeMean {
			return tr.mean[k]
		}
		stride := tr.grid.cells + 1
		return tr.grid.sample(tr.nodes[k*stride:(k+1)*stride], p)
	}
	switch {
	case t <= 0 || n == 1:
		return val(0)
	case t >= tr.Times[n-1]:
		return tr.extrapolate(val(n-2), val(n-1), tr.Times[n-1]-tr.Times[n-2], t-tr.Times[n-1])
	}
	k := search(tr.Times, t)
	f := (t - tr.Times[k-1]) / (tr.Times[k] - tr.Times[k-1])
	a, b := val(k-1), val(k)
	return a + f*(b-a)
}

// extrapolate continues the last step's exponential approach to the ambient.
func (tr *Trajectory) extrapolate(a, b, dt, after float64) float64 {
	ea, eb := a-tr.ambient, b-tr.ambient
	if ea == 0 || eb/ea <= 0 || eb/ea >= 1 {
		return b
	}
	return tr.ambient + eb*math.Exp(math.Log(eb/ea)*after/dt)
}

// search returns the smallest k >= 1 with xs[k] >= x (xs increasing, x inside).
func search(xs []float64, x float64) int {
	lo, hi := 1, len(xs)-1
	for lo < hi {
		mid := (lo + hi) / 2
		if xs[mid] >= x {
			hi = mid
		} else {
			lo = mid + 1
		}
	}
	return lo
}
