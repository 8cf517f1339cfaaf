package predict

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// HProblem is the data for FitH: the lumped model with a temperature-dependent
// surface coefficient, C·dT/dt = −h(T)·(T − T∞).
type HProblem struct {
	// Times (seconds from the segment start, non-decreasing) and Celsius are the
	// readings, as in LumpedProblem.
	Times, Celsius []float64
	// Ambient, when non-nil, is the measured ambient at each time; the model then uses
	// its last value as T∞ and shifts each reading by the ambient's change since (a
	// slowly drifting ambient). When nil, T∞ is fitted.
	Ambient []float64
	// Law is the surface law h(T).
	Law SurfaceLaw
	// AmbientPrior and AmbientPriorSD, when AmbientPriorSD > 0 and the ambient is
	// fitted, add a Gaussian prior on T∞ (a penalty (T∞ − prior)²·σ²/SD² with σ the
	// residual scale): early in a long cooling the data barely fix the ambient.
	AmbientPrior, AmbientPriorSD float64
	// priorW2, when positive, is the prior's weight instead of the one taken from the
	// start's σ, so that a fit from a second start has the first's objective
	// (retryFromPrior).
	priorW2 float64
}

// hMaxIter bounds the Levenberg–Marquardt iterations of FitH.
const hMaxIter = 60

// FitH fits the h(T) model by Levenberg–Marquardt (written here: gonum/optimize has no
// least-squares solver) in the parameters Φ0 (fixing the initial temperature),
// q = 1/C and, without a measured ambient, T∞. It starts from a successful lumped fit
// of the same data (start), whose ambient, excess and τ give the first guess. It
// returns the result and its error (the Status's sentinel).
func FitH(p HProblem, start *LumpedResult) (HResult, error) {
	r, err := fitH(p, start)
	if r.table != nil {
		r.table.complete()
	}
	return r, err
}

// fitH is FitH leaving the result's Φ table lazy: the caller completes it
// (phiTable.complete) before the result leaves the goroutine.
func fitH(p HProblem, start *LumpedResult) (HResult, error) {
	return fitHBinned(p, start, maxFitPoints)
}

// fitHBinned is fitH iterating on at most about maxPts binned points (binned).
func fitHBinned(p HProblem, start *LumpedResult, maxPts int) (HResult, error) {
	f := newHFit(p, start, maxPts)
	for !f.step() {
	}
	return f.result()
}

// hFit is an h(T) fit in progress, between its Levenberg–Marquardt iterations, so
// that fitHRace can advance several laws side by side.
type hFit struct {
	res    HResult
	lm     levmar
	full   *hModel // every reading (lm.m holds the bins when binned)
	bins   *hModel // the bins, nil when not binned
	iters  int
	done   bool // converged, failed, or never started (res.Status says which)
	capped bool // stopped at hMaxIter iterations, not converged
}

// newHFit sets up the fit of p from the lumped fit start; the fit is done at once,
// with res.Status set, when start is not a usable fit.
func newHFit(p HProblem, start *LumpedResult, maxPts int) *hFit {
	return newHFitLike(p, start, nil, maxPts)
}

// newHFitLike is newHFit taking the readings' models (every reading, and the bins)
// from like, when like is not nil: a fit of the same readings and ambient from the
// same start under another law, whose models differ from p's only in the law. The
// models' readings are shared, never written.
func newHFitLike(p HProblem, start *LumpedResult, like *hFit, maxPts int) *hFit {
	res := HResult{Law: p.Law, N: len(p.Times), Free: 3, Status: FitNoDecay}
	if p.Ambient != nil {
		res.Free = 2
	}
	if start == nil || start.Status != FitSuccess || start.Excess == 0 {
		return &hFit{res: res, done: true}
	}
	var m, bins *hModel
	if like != nil && like.full != nil {
		m, bins = like.full.withLaw(p.Law), like.bins.withLaw(p.Law)
	} else {
		m = newHModel(p, start)
		bins = binned(m, start, maxPts)
	}
	amb := m.amb
	if !m.measured {
		amb = start.Ambient // like's models may come from another start
	}
	w0 := math.Log(math.Abs(start.Excess))
	q := 1 / (start.Tau * p.Law.H(amb+start.Excess/2, amb))
	f := &hFit{res: res, full: m, bins: bins}
	f.lm = levmar{m: m, x: []float64{w0, q, amb}, free: res.Free, lambda: 1e-3}
	if res.Free == 3 && p.AmbientPriorSD > 0 {
		f.lm.priorAmb = p.AmbientPrior
		f.lm.priorW2 = math.Pow(max(start.Sigma, 0.05)/p.AmbientPriorSD, 2)
		if p.priorW2 > 0 {
			f.lm.priorW2 = p.priorW2
		}
	}
	if bins != nil {
		f.lm.m = bins
	}
	return f
}

// newHModel returns the model of p's readings from the lumped fit start: the
// readings shifted to the last ambient when it is measured, the table's extent. The
// extent covers the readings' excess over the start's ambient and, with an ambient
// prior, over the prior's mean: the steps cannot take the initial excess past the
// extent (ssrAt), and a start whose ambient lies near the readings (a lumped fit of a
// short head, its ambient barely determined) would otherwise fence the fit off from
// the room-temperature ambients the prior favours, where it stalled at the fence.
func newHModel(p HProblem, start *LumpedResult) *hModel {
	m := &hModel{ts: p.Times, law: p.Law, side: sign(start.Excess), measured: p.Ambient != nil}
	m.y = append([]float64(nil), p.Celsius...)
	amb := start.Ambient
	if m.measured {
		amb = p.Ambient[len(p.Ambient)-1]
		for i := range m.y {
			m.y[i] += amb - p.Ambient[i]
		}
	}
	m.amb = amb
	for _, y := range m.y {
		m.tmax = max(m.tmax, math.Abs(y-amb))
		if !m.measured && p.AmbientPriorSD > 0 {
			m.tmax = max(m.tmax, math.Abs(y-p.AmbientPrior))
		}
	}
	m.tmax = 2*max(m.tmax, math.Abs(start.Excess)) + 50
	return m
}

// withLaw returns a copy of m under law, sharing its readings (nil for nil).
func (m *hModel) withLaw(law SurfaceLaw) *hModel {
	if m == nil {
		return nil
	}
	c := *m
	c.law, c.th = law, nil
	return &c
}

// step takes one iteration (at most hMaxIter in all) and reports whether the fit is
// done.
func (f *hFit) step() bool {
	if f.done {
		return true
	}
	if f.iters == hMaxIter {
		f.lm.jacobian()
		f.done, f.capped = true, true
		return true
	}
	f.iters++
	done, ok := f.lm.iterate()
	if done && !ok {
		f.res.Status = FitSingular
		f.lm.m = nil
	}
	f.done = done
	return done
}

// result finishes a done fit.
func (f *hFit) result() (HResult, error) {
	res := f.res
	if f.lm.m == nil {
		return res, res.Status.Err()
	}
	if f.lm.m != f.full {
		// The residual statistics are those of every reading at the optimum the bins
		// found; the weighted bins' Jacobian stands for every reading's (JᵀJ differs
		// by the spread of the rows within a bin, of relative order (bin width/τ)²).
		f.lm.r = interpolatedResiduals(f.full, f.lm.m, f.lm.r, f.lm.x[1])
	}
	f.lm.finish(&res)
	res.capped, res.priorW2 = f.capped, f.lm.priorW2
	d := res.Ambient - f.lm.priorAmb
	res.objective = float64(res.N)*res.RMSE*res.RMSE + f.lm.priorW2*d*d
	return res, res.Status.Err()
}

// stallSDs is how many prior SDs from the prior's mean a fitted ambient may lie before
// retryFromPrior tries the second start. Our choice: at 2 (a fitted ambient outside
// 6–38 °C for the room prior) the second start is tried on 123 of the benchmark's 288
// h(T) fits with a fitted ambient under the default law (its cutoffs and their
// backtest heads; 23 of them ran out of iterations) and lowers the objective by more
// than 0.01 % on 21 (17 of them ran out).
const stallSDs = 2.0

// stalled reports whether the h(T) fit r, whose ambient is fitted with a prior of mean
// prior and SD sd, may have stopped short of its objective's optimum: its iterations
// ran out (from a start whose ambient lies far along the curved valley between the
// ambient and the initial excess, the steps crawl down it: a short head's lumped fit,
// its ambient barely determined, can start 80 K from the optimum), or its ambient lies
// more than stallSDs SDs from the prior's mean (it may sit in a local optimum near
// such a start).
func stalled(r *HResult, prior, sd float64) bool {
	return r.capped || math.Abs(r.Ambient-prior) > stallSDs*sd
}

// priorStart returns the lumped fit of the readings with the ambient held at amb, a
// start for the h(T) fit at the prior's mean; nil when it fails.
func priorStart(times, celsius []float64, amb float64) *LumpedResult {
	p := LumpedProblem{Times: times, Celsius: celsius, Ambient: make([]float64, len(times))}
	for i := range p.Ambient {
		p.Ambient[i] = amb
	}
	r, err := FitLumped(p, nil)
	if err != nil {
		return nil
	}
	return &r
}

// retryFromPrior returns the h(T) fit r of hps (one curve under one or more surface
// laws, its ambient fitted with a prior) or, when r is stalled, the fit from a second
// start at the prior's mean (priorStart; fit runs the fit of hps from a start) when
// that reaches a lower objective (sum of squares of every reading and the prior's
// penalty, at r's prior weight). The lumped start of a short head can put the ambient
// near the readings, 80 K from where the prior and the h(T) curve put it, and the
// fit from there either runs out of iterations or stops in a local optimum. Nil for
// a nil r.
func retryFromPrior(r *HResult, hps []HProblem, fit func([]HProblem, *LumpedResult) *HResult) *HResult {
	if r == nil || len(hps) == 0 {
		return r
	}
	p := hps[0]
	if p.Ambient != nil || !(p.AmbientPriorSD > 0) || !stalled(r, p.AmbientPrior, p.AmbientPriorSD) {
		return r
	}
	s := priorStart(p.Times, p.Celsius, p.AmbientPrior)
	if s == nil || s.Excess == 0 {
		return r
	}
	for i := range hps {
		hps[i].priorW2 = r.priorW2
	}
	if a := fit(hps, s); a != nil && a.objective < r.objective {
		return a
	}
	return r
}

// Pruning in fitHRace: after pruneAfter iterations, a law whose Gauss–Newton floor
// (the least sum the linearised model reaches from its current point) exceeds
// pruneFactor times the leader's current sum is dropped. The leader's sum only falls
// as it iterates, and a law's floor a few iterations in lies near its final sum, so
// a dropped law would not have been the best. Our choice, checked by
// TestFitHRaceMatchesAll on the benchmark's 338 races of three laws: at 2 a race
// drops 177 laws and always keeps the winner; at 1.5 it once dropped the winner.
const (
	pruneAfter  = 2
	pruneFactor = 2.0
)

// fitHRace fits the h(T) model to each of ps (one curve under several surface laws:
// the same readings, ambient and prior, so they share their models, like's when like
// is not nil) from the lumped fit start, advancing the fits an iteration at a time and
// dropping those that clearly lose (pruneFactor). It returns the successful fit with
// the lowest objective (the sum of squares and, with a fitted ambient, the room
// prior's term, which the laws share: of laws that fit alike, the one settling toward
// a plausible room; by residual alone a fan-cooled specimen's readings took a still-air
// law toward 1–10 °C), or nil when none succeeds, and how many laws it dropped.
func fitHRace(ps []HProblem, start *LumpedResult, like *hFit) (best *HResult, dropped int) {
	fits := make([]*hFit, len(ps))
	for i, p := range ps {
		if i > 0 && like == nil {
			like = fits[0]
		}
		fits[i] = newHFitLike(p, start, like, maxFitPoints)
	}
	for {
		running := false
		lead := math.Inf(1)
		for _, f := range fits {
			if !f.step() {
				running = true
			}
			if f.lm.m != nil && f.iters > 0 {
				lead = min(lead, f.lm.cur)
			}
		}
		if !running {
			break
		}
		for _, f := range fits {
			if !f.done && f.iters >= pruneAfter && f.lm.floor > pruneFactor*lead {
				f.done, f.lm.m = true, nil
				dropped++
			}
		}
	}
	for _, f := range fits {
		if r, err := f.result(); err == nil && (best == nil || r.objective < best.objective) {
			best = &r
		}
	}
	return best, dropped
}

// maxFitPoints is about the most points an h(T) fit iterates on (binned): a fit's
// cost grows with its points and a daemon refits every channel every few seconds.
const maxFitPoints = 200

// binBias is the largest bias, as a share of the readings' noise σ (and at least
// binBiasMin K), that evaluating the model at a bin's mean time instead of averaging
// it over the bin's readings may bring: ½·|d²T/dt²|·var(t) ≤ binBias·σ. It is set
// low because the curvature is taken from the lumped start, which under-reads the
// early bend of a hot specimen's h(T) curve several-fold (TestFitHBinnedMatchesFull).
const (
	binBias    = 0.005
	binBiasMin = 1e-4
)

// interpolatedResiduals returns every reading's residual for a fit iterated on bins
// b (whose weighted residuals rb, and θ·h in b.th, are at the optimum with q): the
// model at each reading is the cubic Hermite interpolant of its values and slopes
// dT/dt = −q·θ·h at the bins' mean times, which are at most a few seconds apart where
// the curve bends (binBias), so the interpolation error is far below the noise and
// no reading is inverted through the Φ table.
func interpolatedResiduals(m, b *hModel, rb []float64, q float64) []float64 {
	nb := len(b.ts)
	v, d := make([]float64, nb), make([]float64, nb)
	for k := range nb {
		v[k] = b.y[k] - rb[k]/b.wt[k]
		d[k] = -q * b.th[k] / b.wt[k]
	}
	r := make([]float64, len(m.ts))
	k := 0
	for i, t := range m.ts {
		for k < nb-2 && t > b.ts[k+1] {
			k++
		}
		r[i] = m.y[i] - hermiteAt(t, b.ts[k], b.ts[k+1], v[k], v[k+1], d[k], d[k+1])
	}
	return r
}

// hermiteAt evaluates at t the cubic through (t0, v0) and (t1, v1) with slopes d0, d1.
func hermiteAt(t, t0, t1, v0, v1, d0, d1 float64) float64 {
	h := t1 - t0
	if !(h > 0) {
		return v0
	}
	s := (t - t0) / h
	s2, s3 := s*s, s*s*s
	return (2*s3-3*s2+1)*v0 + (s3-2*s2+s)*h*d0 + (-2*s3+3*s2)*v1 + (s3-s2)*h*d1
}

// noise estimates the noise σ of readings y from their second differences (a smooth
// curve's are far smaller): y[i+1] − 2y[i] + y[i−1] has variance 6σ² for white noise.
func noise(y []float64) float64 {
	if len(y) < 3 {
		return 0
	}
	var ss float64
	for i := 1; i < len(y)-1; i++ {
		d := y[i+1] - 2*y[i] + y[i-1]
		ss += d * d
	}
	return math.Sqrt(ss / float64(6*(len(y)-2)))
}

// binned returns m with its readings averaged in bins of consecutive readings (time,
// reading) and weighted by their counts, so that its weighted least squares are
// those of all the readings up to a constant (the spread within the bins) — or nil
// when m has at most maxPts readings. A bin holds at most ⌈n/maxPts⌉ readings, and
// fewer where the curve bends: its d²T/dt² (from the lumped start, θ·e^(−t/τ)/τ²) times
// the variance of its times stays within binBias of the noise (from second
// differences), so the mean of the
// model over a bin and the model at the bin's mean time agree. Unlike every k-th
// reading, the bins keep all the readings' information on the parameters.
func binned(m *hModel, start *LumpedResult, maxPts int) *hModel {
	n := len(m.ts)
	if n <= maxPts || !(start.Tau > 0) {
		return nil
	}
	kmax := (n + maxPts - 1) / maxPts
	tol := max(binBias*noise(m.y), binBiasMin)
	b := *m
	b.ts, b.y, b.wt, b.th = nil, nil, nil, nil
	for i := 0; i < n; {
		curv := math.Abs(start.Excess) * math.Exp(-m.ts[i]/start.Tau) / (start.Tau * start.Tau)
		var st, sy, stt float64
		k := 0
		for i+k < n && k < kmax {
			t := m.ts[i+k]
			nt, ntt := st+t, stt+t*t
			c := float64(k + 1)
			if k > 0 && curv*(ntt/c-(nt/c)*(nt/c))/2 > tol {
				break
			}
			st, stt, sy = nt, ntt, sy+m.y[i+k]
			k++
		}
		c := float64(k)
		b.ts, b.y, b.wt = append(b.ts, st/c), append(b.y, sy/c), append(b.wt, math.Sqrt(c))
		i += k
	}
	return &b
}

// levmar is the Levenberg–Marquardt state of an h(T) fit.
type levmar struct {
	m    *hModel
	x    []float64 // w0, q, amb
	free int
	tb   *phiTable
	r    []float64
	jac  *mat.Dense
	ssr  float64

	// tables holds the Φ tables built so far by ambient, most recently used last (a
	// trial step's table is the next iteration's when the step is taken; a measured
	// ambient needs one for the whole fit).
	tables []*phiTable
	// A trial step's residuals and Jacobian rows (the ambient column aside), its
	// point, sum of squares and whether the sum ran to the end: when the step is
	// taken they are the next Jacobian's, so the readings are not inverted twice.
	tr    []float64
	tjac  *mat.Dense
	tx    []float64
	tssr  float64
	tfull bool

	priorAmb, priorW2 float64 // the ambient prior's mean and weight (0: none)

	// emis, when not nil, makes the emissivity a parameter, x[3], in the last column.
	emis *emisParam

	lambda float64 // Marquardt's damping
	// cur is the objective (sum of squares and prior) at the start of the latest
	// iteration, floor the least the Gauss–Newton model reaches from there (0 when
	// unknown): fitHRace compares them across laws.
	cur, floor float64
}

// emisParam is the emissivity as a parameter of an h(T) fit (fitEmissivityLM): a
// Gaussian prior on it, held within lo–hi.
type emisParam struct {
	mean, lo, hi float64
	// The prior's weight w is (full − bins + ssr)/crit, ssr the bins' sum of squares
	// at the iteration's start: crit = n_eff·sd², full and bins the sums of squares
	// of every reading and of the bins at the start (bins taken at the first
	// iteration, binsSet). The sum of squares of every reading is the bins' plus
	// about a constant (the spread within the bins), so the fit ends where the
	// criterion n_eff·ln(SSR) + ((ε − mean)/sd)² is stationary in ε.
	full, bins, crit, w float64
	binsSet             bool
	// tMid is a middle surface temperature of the curve: the steps are taken in
	// k = q·h(tMid) instead of q (toRate).
	tMid float64
}

// penalty is the priors' term of the objective at x: the ambient's, and the
// emissivity's when it is fitted.
func (lm *levmar) penalty(x []float64) float64 {
	p := lm.priorW2 * (x[2] - lm.priorAmb) * (x[2] - lm.priorAmb)
	if e := lm.emis; e != nil {
		p += e.w * (x[3] - e.mean) * (x[3] - e.mean)
	}
	return p
}

// ambFree reports whether the ambient is fitted (column 2).
func (lm *levmar) ambFree() bool { return lm.free == 3 && lm.emis == nil || lm.free == 4 }

// param returns the index in x of column c's parameter: the emissivity's column is
// the last, its parameter x[3].
func (lm *levmar) param(c int) int {
	if lm.emis != nil && c == lm.free-1 {
		return 3
	}
	return c
}

// jacobian evaluates residuals and the Jacobian at lm.x.
func (lm *levmar) jacobian() {
	n := len(lm.m.ts)
	if lm.r == nil {
		lm.r = make([]float64, n)
		lm.jac = mat.NewDense(n, lm.free, nil)
	}
	lm.tb = lm.table(lm.x)
	if lm.tfull && slices.Equal(lm.tx, lm.x) {
		lm.r, lm.tr = lm.tr, lm.r
		lm.jac, lm.tjac = lm.tjac, lm.jac
		lm.ssr = lm.tssr
	} else {
		lm.ssr = lm.m.residuals(lm.tb, lm.x[0], lm.x[1], lm.r, lm.jac, math.Inf(1))
	}
	lm.tfull = false
}

// ssrAt returns the residual sum of squares at x, or a partial sum above limit as
// soon as it exceeds limit (the trial step is then refused whatever the rest).
func (lm *levmar) ssrAt(x []float64, limit float64) float64 {
	lm.tfull = false
	if !(x[1] > 0) || !(x[0] < math.Log(lm.m.tmax)) {
		return math.Inf(1)
	}
	if lm.tr == nil {
		lm.tr = make([]float64, len(lm.m.ts))
		lm.tjac = mat.NewDense(len(lm.m.ts), lm.free, nil)
	}
	lm.tssr = lm.m.residuals(lm.table(x), x[0], x[1], lm.tr, lm.tjac, limit)
	lm.tx = append(lm.tx[:0], x...)
	lm.tfull = !(lm.tssr > limit)
	return lm.tssr
}

// lmTables is how many recent Φ tables a fit keeps for reuse: the current point's and
// a trial step's (which becomes the current one when the step is taken). A refused
// trial's successor takes over the current point's table, which is then rebuilt if
// no trial is taken, a rare case; more tables cost memory (each 4 columns of a few
// hundred nodes) in every fit.
const lmTables = 2

// table returns the Φ table at x's ambient (with the derivative Φa when the ambient
// is fitted) and, when the emissivity is fitted, at x's emissivity (with Φe),
// reusing one built before at the same point. The tables are kept least recently used first; a new table takes over the
// storage of the least recently used one when lmTables are kept, so a fit allocates
// lmTables tables however long it runs. A table returned stays valid through the
// next call (it is then the most recently used), and jacobian looks lm.tb up afresh
// each time, so a trial step's table never overwrites one still in use.
func (lm *levmar) table(x []float64) *phiTable {
	amb, law := x[2], lm.m.law
	if lm.emis != nil {
		law.Emissivity = x[3]
	}
	for i, tb := range lm.tables {
		if tb.amb == amb && tb.law.Emissivity == law.Emissivity {
			lm.tables = append(append(lm.tables[:i], lm.tables[i+1:]...), tb)
			return tb
		}
	}
	var tb *phiTable
	if len(lm.tables) == lmTables {
		tb = lm.tables[0]
		lm.tables = append(lm.tables[:0], lm.tables[1:]...)
		*tb = phiTable{amb: amb, side: lm.m.side, law: law, phi: tb.phi, inv: tb.inv, phiA: tb.phiA, invA: tb.invA, phiE: tb.phiE, invE: tb.invE, lo: 1, hi: 0}
	} else {
		tb = newPhiTableE(law, amb, lm.m.side, lm.m.tmax, lm.ambFree(), lm.emis != nil)
	}
	lm.tables = append(lm.tables, tb)
	return tb
}

// iterate takes one Levenberg–Marquardt step from lm.x; done is set when the fit has
// converged (ok) or its normal equations are singular (not ok).
func (lm *levmar) iterate() (done, ok bool) {
	k := lm.free
	lm.jacobian()
	jtj, g := normalEquations(lm.jac, lm.r)
	if lm.priorW2 > 0 {
		jtj.SetSym(2, 2, jtj.At(2, 2)+lm.priorW2)
		g.SetVec(2, g.AtVec(2)+lm.priorW2*(lm.priorAmb-lm.x[2]))
	}
	if e := lm.emis; e != nil {
		if !e.binsSet {
			e.bins, e.binsSet = lm.ssr, true
		}
		e.w = (e.full - e.bins + lm.ssr) / e.crit
		jtj.SetSym(k-1, k-1, jtj.At(k-1, k-1)+e.w)
		g.SetVec(k-1, g.AtVec(k-1)+e.w*(e.mean-lm.x[3]))
		jtj, g = lm.toRate(jtj, g)
	}
	cur := lm.ssr + lm.penalty(lm.x)
	lm.cur, lm.floor = cur, 0
	if inv, ok := normalInverse(jtj, 1); ok {
		lm.floor = cur - mat.Inner(g, inv, g)
		if cur-lm.floor <= 1e-10*cur {
			// Converged: even the full Gauss–Newton step would lower the sum by no
			// more than the 1e-10 under which a taken step ends the iterations.
			return true, true
		}
	}
	dscale := make([]float64, k)
	for i := range k {
		dscale[i] = math.Sqrt(jtj.At(i, i))
		if !(dscale[i] > 0) {
			return true, false
		}
	}
	improved := false
	for range 6 {
		// Solve in variables scaled by sqrt(diag JᵀJ) (Marquardt's scaling): the
		// parameters differ by many orders of magnitude, and unscaled normal
		// equations would be too ill-conditioned to factorise at small λ.
		var a [4][4]float64
		var gs [4]float64
		for i := range k {
			for j := i; j < k; j++ {
				a[i][j] = jtj.At(i, j) / (dscale[i] * dscale[j])
				a[j][i] = a[i][j]
			}
			a[i][i] = 1 + lm.lambda
			gs[i] = g.AtVec(i) / dscale[i]
		}
		dx, ok := solveSPD(a, gs, k)
		if !ok {
			lm.lambda *= 10
			continue
		}
		next := append([]float64(nil), lm.x...)
		small := true
		for i := range k {
			dx[i] /= dscale[i]
			j := lm.param(i)
			next[j] += dx[i]
			small = small && math.Abs(dx[i]) <= 1e-9*(math.Abs(lm.x[j])+1e-3)
		}
		if e := lm.emis; e != nil {
			next[3] = max(e.lo, min(e.hi, next[3]))
			if next[3] == lm.x[3] && (next[3] == e.lo || next[3] == e.hi) {
				// At a bound and pushed beyond it: the caller refits there.
				return true, true
			}
			// dx[1] is the step in k = q·h(tMid); q follows k, T∞ and ε.
			next[1] = (lm.x[1]*lm.hMid(lm.x) + dx[1]) / lm.hMid(next)
		}
		pen := lm.penalty(next)
		limit := math.Inf(1)
		if !small {
			limit = cur - pen // a larger sum refuses the step
		}
		s := lm.ssrAt(next, limit) + pen
		if s < cur || small {
			converged := cur-s <= 1e-10*cur || small
			copy(lm.x, next)
			lm.lambda = max(lm.lambda/10, 1e-12)
			improved = true
			if converged {
				lm.jacobian()
				return true, true
			}
			break
		}
		lm.lambda *= 10
	}
	if !improved {
		lm.jacobian()
		return true, true // no step reduces the sum: at the optimum to rounding
	}
	return false, false
}

// hMid returns h at tMid for x's ambient and emissivity.
func (lm *levmar) hMid(x []float64) float64 {
	law := lm.m.law
	law.Emissivity = x[3]
	return law.H(lm.emis.tMid, x[2])
}

// toRate returns the normal equations jtj, g of an emissivity fit in the
// parameters (w0, k, [T∞,] ε), k = q·h(tMid) with tMid a middle surface temperature,
// instead of (w0, q, [T∞,] ε): a change of emissivity or ambient scales h, and with
// k held the fitted rate at the middle of the curve stays put, so the
// Levenberg–Marquardt steps follow the valley of the sum of squares instead of
// crossing it (with q the fits took two to three times the iterations).
func (lm *levmar) toRate(jtj *mat.SymDense, g *mat.VecDense) (*mat.SymDense, *mat.VecDense) {
	k, e := lm.free, lm.free-1
	hm := lm.hMid(lm.x)
	// dq = a·dk + b·dε + c·dT∞, the slopes of h(tMid) from differences.
	const d = 1e-4
	a := 1 / hm
	hi, lo := append([]float64(nil), lm.x...), append([]float64(nil), lm.x...)
	hi[3], lo[3] = lm.x[3]+d, lm.x[3]-d
	b := -lm.x[1] * (lm.hMid(hi) - lm.hMid(lo)) / (2 * d) / hm
	var t [4][4]float64
	for i := range k {
		t[i][i] = 1
	}
	t[1][1], t[1][e] = a, b
	if lm.ambFree() {
		hi[3], lo[3] = lm.x[3], lm.x[3]
		hi[2], lo[2] = lm.x[2]+d, lm.x[2]-d
		t[1][2] = -lm.x[1] * (lm.hMid(hi) - lm.hMid(lo)) / (2 * d) / hm
	}
	out, og := mat.NewSymDense(k, nil), mat.NewVecDense(k, nil)
	for i := range k {
		var gi float64
		for m := range k {
			gi += t[m][i] * g.AtVec(m)
		}
		og.SetVec(i, gi)
		for j := i; j < k; j++ {
			var s float64
			for m := range k {
				for n := range k {
					s += t[m][i] * jtj.At(m, n) * t[n][j]
				}
			}
			out.SetSym(i, j, s)
		}
	}
	return out, og
}

// solveSPD solves a·x = b for a symmetric positive definite a of k ≤ 4 rows by
// Cholesky, as gonum's mat.Cholesky did here before (it fails where gonum's
// Factorize fails, a pivot not above zero, or where its solve reports a condition
// number above mat.ConditionTolerance, taken here exactly in the 1-norm from the
// inverse instead of estimated). Written out: gonum's condition estimate cost more
// than the rest of the step.
func solveSPD(a [4][4]float64, b [4]float64, k int) (x [4]float64, ok bool) {
	l, ok := cholesky4(a, k)
	if !ok {
		return x, false
	}
	// Forward and back substitution: L·y = b, Lᵀ·x = y.
	var y [4]float64
	for i := range k {
		s := b[i]
		for m := range i {
			s -= l[i][m] * y[m]
		}
		y[i] = s / l[i][i]
	}
	for i := k - 1; i >= 0; i-- {
		s := y[i]
		for m := i + 1; m < k; m++ {
			s -= l[m][i] * x[m]
		}
		x[i] = s / l[i][i]
	}
	// ‖a‖₁·‖a⁻¹‖₁ with a⁻¹ = L⁻ᵀ·L⁻¹.
	li := lowerInverse4(l, k)
	var norm, normInv float64
	for j := range k {
		var c, ci float64
		for i := range k {
			c += math.Abs(a[i][j])
			var s float64
			for m := max(i, j); m < k; m++ {
				s += li[m][i] * li[m][j]
			}
			ci += math.Abs(s)
		}
		norm, normInv = max(norm, c), max(normInv, ci)
	}
	return x, norm*normInv <= mat.ConditionTolerance
}

// cholesky4 returns the lower Cholesky factor L of the symmetric a (its lower
// triangle read) of k ≤ 4 rows, a = L·Lᵀ; ok is false at a pivot not above zero.
func cholesky4(a [4][4]float64, k int) (l [4][4]float64, ok bool) {
	for j := range k {
		for i := j; i < k; i++ {
			s := a[i][j]
			for m := range j {
				s -= l[i][m] * l[j][m]
			}
			if i == j {
				if !(s > 0) {
					return l, false
				}
				l[j][j] = math.Sqrt(s)
			} else {
				l[i][j] = s / l[j][j]
			}
		}
	}
	return l, true
}

// lowerInverse4 returns L⁻¹ for a lower triangular l of k ≤ 4 rows with a nonzero
// diagonal (a Cholesky factor).
func lowerInverse4(l [4][4]float64, k int) (li [4][4]float64) {
	for j := range k {
		li[j][j] = 1 / l[j][j]
		for i := j + 1; i < k; i++ {
			var s float64
			for m := j; m < i; m++ {
				s += l[i][m] * li[m][j]
			}
			li[i][j] = -s / l[i][i]
		}
	}
	return li
}

// normalEquations returns JᵀJ and Jᵀr for a Jacobian j of at most 4 columns, summed
// row by row (gonum's general routines cost more than the sums for so few columns).
func normalEquations(j *mat.Dense, r []float64) (*mat.SymDense, *mat.VecDense) {
	raw := j.RawMatrix()
	k := raw.Cols
	var a [4][4]float64
	var b [4]float64
	// Written out for the h(T) fit's two and three columns; each sum runs over the
	// rows in order, as in the general loop, so the sums are the same.
	switch k {
	case 3:
		var a00, a01, a02, a11, a12, a22, b0, b1, b2 float64
		for i, ri := range r[:raw.Rows] {
			row := raw.Data[i*raw.Stride : i*raw.Stride+3 : i*raw.Stride+3]
			j0, j1, j2 := row[0], row[1], row[2]
			b0 += j0 * ri
			a00 += j0 * j0
			a01 += j0 * j1
			a02 += j0 * j2
			b1 += j1 * ri
			a11 += j1 * j1
			a12 += j1 * j2
			b2 += j2 * ri
			a22 += j2 * j2
		}
		a = [4][4]float64{{a00, a01, a02}, {0, a11, a12}, {0, 0, a22}}
		b = [4]float64{b0, b1, b2}
	case 2:
		var a00, a01, a11, b0, b1 float64
		for i, ri := range r[:raw.Rows] {
			row := raw.Data[i*raw.Stride : i*raw.Stride+2 : i*raw.Stride+2]
			j0, j1 := row[0], row[1]
			b0 += j0 * ri
			a00 += j0 * j0
			a01 += j0 * j1
			b1 += j1 * ri
			a11 += j1 * j1
		}
		a[0][0], a[0][1], a[1][1] = a00, a01, a11
		b[0], b[1] = b0, b1
	default:
		for i, ri := range r[:raw.Rows] {
			row := raw.Data[i*raw.Stride : i*raw.Stride+k]
			for p, jp := range row {
				b[p] += jp * ri
				for q := p; q < k; q++ {
					a[p][q] += jp * row[q]
				}
			}
		}
	}
	jtj, g := mat.NewSymDense(k, nil), mat.NewVecDense(k, nil)
	for p := range k {
		g.SetVec(p, b[p])
		for q := p; q < k; q++ {
			jtj.SetSym(p, q, a[p][q])
		}
	}
	return jtj, g
}

// finish fills the result from the converged state.
func (lm *levmar) finish(res *HResult) {
	st := statsOf(lm.r)
	n := float64(len(lm.r))
	res.w0, res.q, res.Ambient, res.table, res.tmax = lm.x[0], lm.x[1], lm.x[2], lm.tb, lm.m.tmax
	res.phi0 = lm.tb.at(res.w0)
	res.RMSE = math.Sqrt(st.ssr / n)
	res.Sigma = math.Sqrt(st.ssr / (n - float64(lm.free)))
	res.Rho = st.rho
	res.Misfit = math.Sqrt(max(0, res.RMSE*res.RMSE-st.vonNeumann))
	res.Capacity = 1 / res.q
	theta0 := lm.m.side * math.Exp(res.w0)
	res.Initial = res.Ambient + theta0
	jtj, _ := normalEquations(lm.jac, lm.r)
	cov, ok := normalInverse(jtj, res.Sigma)
	if !ok {
		res.Status = FitSingular
		return
	}
	full := mat.NewSymDense(3, nil)
	for a := range lm.free {
		for b := a; b < lm.free; b++ {
			full.SetSym(a, b, cov.At(a, b))
		}
	}
	res.Cov = full
	res.InitialErr = math.Abs(theta0) * math.Sqrt(full.At(0, 0))
	res.CapacityErr = math.Sqrt(full.At(1, 1)) / (res.q * res.q)
	res.AmbientErr = math.Sqrt(full.At(2, 2))
	res.Status = FitSuccess
}

// statsOf summarises residuals in time order.
func statsOf(r []float64) residualStats {
	var st residualStats
	var lag, diff float64
	for i, x := range r {
		st.ssr += x * x
		if i > 0 {
			lag += x * r[i-1]
			diff += (x - r[i-1]) * (x - r[i-1])
		}
	}
	if st.ssr > 0 {
		st.rho = lag / st.ssr
	}
	if len(r) > 1 {
		st.vonNeumann = diff / float64(2*(len(r)-1))
	}
	return st
}

// normalInverse returns σ²·N⁻¹ for a normal matrix N = JᵀJ of at most 4×4, inverting
// it with its rows and columns scaled to a unit diagonal so that parameters of very
// different size (kelvin, seconds, J/(m²·K)) do not make it look singular. It fails
// only when the scaled matrix is not positive definite (a Cholesky pivot not above
// zero); an ill-conditioned but invertible N is accepted. The factorisation is written
// out: gonum's also estimates the condition number, which cost more than the rest of
// a lumped fit's covariance.
func normalInverse(n *mat.SymDense, sigma float64) (*mat.SymDense, bool) {
	k := n.SymmetricDim()
	if k > 4 {
		panic("predict: normalInverse of more than 4 parameters")
	}
	var scale [4]float64
	for i := range k {
		scale[i] = math.Sqrt(n.At(i, i))
		if !(scale[i] > 0) {
			return nil, false
		}
	}
	// A = L·Lᵀ for the scaled matrix, then A⁻¹ = L⁻ᵀ·L⁻¹.
	var a [4][4]float64
	for j := range k {
		for i := j; i < k; i++ {
			a[i][j] = n.At(i, j) / (scale[i] * scale[j])
		}
	}
	l, ok := cholesky4(a, k)
	if !ok {
		return nil, false
	}
	li := lowerInverse4(l, k)
	out := mat.NewSymDense(k, nil)
	for i := range k {
		for j := i; j < k; j++ {
			var s float64
			for m := j; m < k; m++ {
				s += li[m][i] * li[m][j]
			}
			out.SetSym(i, j, sigma*sigma*s/(scale[i]*scale[j]))
		}
	}
	return out, true
}
