package predict

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Sentinel errors returned by FitLumped (through FitStatus.Err) and by callers that wrap
// them. Compare with errors.Is.
var (
	// ErrTooFewPoints: fewer readings than LumpedSettings.MinPoints.
	ErrTooFewPoints = errors.New("predict: too few points to fit")
	// ErrShortSpan: the readings span less time than LumpedSettings.MinSpan (or none).
	ErrShortSpan = errors.New("predict: readings span too short a time to fit")
	// ErrNoDecay: the data show no exponential decay that the model can resolve: the
	// best time constant lies at an end of the search range (a line or a step), or the
	// fitted initial excess is under three standard errors from zero (flat noise).
	ErrNoDecay = errors.New("predict: no resolvable exponential decay in the data")
	// ErrSingular: the parameters are not identifiable from the data (singular J^T J).
	ErrSingular = errors.New("predict: fitted parameters not identifiable")
)

// FitStatus is the outcome of a fit.
type FitStatus int

// The fit outcomes.
const (
	// FitNotRun: no fit has been attempted.
	FitNotRun FitStatus = iota
	// FitSuccess: the fit converged and the standard errors are valid.
	FitSuccess
	// FitTooFewPoints: see ErrTooFewPoints.
	FitTooFewPoints
	// FitShortSpan: see ErrShortSpan.
	FitShortSpan
	// FitNoDecay: see ErrNoDecay.
	FitNoDecay
	// FitSingular: see ErrSingular.
	FitSingular
)

// String returns a short lower-case name of the status.
func (s FitStatus) String() string {
	switch s {
	case FitNotRun:
		return "not run"
	case FitSuccess:
		return "success"
	case FitTooFewPoints:
		return "too few points"
	case FitShortSpan:
		return "short span"
	case FitNoDecay:
		return "no decay"
	case FitSingular:
		return "singular"
	}
	return fmt.Sprintf("FitStatus(%d)", int(s))
}

// Err returns the sentinel error for a failed status, nil for FitSuccess.
func (s FitStatus) Err() error {
	switch s {
	case FitSuccess:
		return nil
	case FitNotRun:
		return errors.New("predict: fit not run")
	case FitTooFewPoints:
		return ErrTooFewPoints
	case FitShortSpan:
		return ErrShortSpan
	case FitNoDecay:
		return ErrNoDecay
	case FitSingular:
		return ErrSingular
	}
	return fmt.Errorf("predict: unknown fit status %d", int(s))
}

// LumpedProblem is the data for a lumped-capacitance fit of
//
//	T(t) = Tamb(t) + θi·exp(−t/τ)
//
// Three variants follow from the fields: Ambient nil fits a constant Tamb, θi and τ;
// Ambient set fits θi and τ with the ambient known at each point; Ambient set and
// FixExcess fits τ alone.
type LumpedProblem struct {
	// Times are the reading times in seconds from the segment start (t = 0 is where the
	// excess equals θi), in non-decreasing order.
	Times []float64
	// Celsius holds the readings, °C, one per time.
	Celsius []float64
	// Ambient, when non-nil, is the measured ambient at each time (°C, same length as
	// Times) and is not fitted; a fixed ambient is a slice of one repeated value. When
	// nil, a constant ambient is fitted.
	Ambient []float64
	// FixExcess fixes the initial excess θi at Excess instead of fitting it. It
	// requires Ambient.
	FixExcess bool
	// Excess is the fixed initial excess θi, °C, used when FixExcess is set.
	Excess float64
}

// free is the number of fitted parameters of the problem's variant.
func (p *LumpedProblem) free() int {
	switch {
	case p.Ambient == nil:
		return 3
	case p.FixExcess:
		return 1
	}
	return 2
}

// check panics on misuse (mismatched lengths, unordered times, FixExcess without
// Ambient), following gonum: misuse panics, conditions of the data return errors.
func (p *LumpedProblem) check() {
	if len(p.Times) != len(p.Celsius) {
		panic("predict: LumpedProblem Times and Celsius differ in length")
	}
	if p.Ambient != nil && len(p.Ambient) != len(p.Times) {
		panic("predict: LumpedProblem Ambient and Times differ in length")
	}
	if p.FixExcess && p.Ambient == nil {
		panic("predict: LumpedProblem FixExcess requires Ambient")
	}
	ts := p.Times
	for i := 1; i < len(ts); i++ {
		if ts[i] < ts[i-1] {
			panic("predict: LumpedProblem Times not in non-decreasing order")
		}
	}
}

// LumpedSettings tunes FitLumped. The zero value is ready to use; each field documents
// its default.
type LumpedSettings struct {
	// MinPoints is the fewest readings a fit accepts. Zero means 8. It is never taken
	// below the number of fitted parameters plus 2.
	MinPoints int
	// MinSpan is the shortest time span of the readings, seconds. Zero means any
	// positive span.
	MinSpan float64
	// TauMin and TauMax bound the search for τ, seconds. Zero means span/1000 and
	// 100·span, where span is the time the readings cover.
	TauMin, TauMax float64
	// GridPerDecade is the number of τ grid points per decade used to bracket the
	// optimum before refining it. Zero means 12.
	GridPerDecade int
	// TauTol is the relative tolerance on τ at the optimum. Zero means 1e-8.
	TauTol float64
}

func (s LumpedSettings) withDefaults(free int, span float64) LumpedSettings {
	if s.MinPoints == 0 {
		s.MinPoints = 8
	}
	s.MinPoints = max(s.MinPoints, free+2)
	if s.TauMin == 0 {
		s.TauMin = span / 1000
	}
	if s.TauMax == 0 {
		s.TauMax = 100 * span
	}
	if s.GridPerDecade == 0 {
		s.GridPerDecade = 12
	}
	if s.TauTol == 0 {
		s.TauTol = 1e-8
	}
	return s
}

// LumpedResult is the outcome of FitLumped.
type LumpedResult struct {
	// Status says whether the fit succeeded; Err turns it into an error.
	Status FitStatus
	// Ambient is the settling temperature, °C: fitted, or with a measured ambient the
	// value at the last reading.
	Ambient float64
	// Excess is the initial excess θi = T(0) − Tamb, °C (negative when heating).
	Excess float64
	// Tau is the time constant τ, seconds.
	Tau float64
	// AmbientErr, ExcessErr and TauErr are standard errors from σ²·(JᵀJ)⁻¹ at the
	// optimum; 0 for a parameter that was given, NaN when unknown.
	AmbientErr, ExcessErr, TauErr float64
	// Cov is the 3×3 parameter covariance in the order ambient, excess, tau; rows of
	// given parameters are zero. Nil unless Status is FitSuccess.
	Cov *mat.SymDense
	// N is the number of readings; Free the number of fitted parameters.
	N, Free int
	// RMSE is the root-mean-square residual, °C.
	RMSE float64
	// Sigma is the residual standard deviation sqrt(SSR/(N−Free)), °C.
	Sigma float64
	// Rho is the lag-1 autocorrelation of the residuals in time order.
	Rho float64
	// Misfit estimates the smooth, structured part of the residuals, °C:
	// sqrt(max(0, RMSE² − D²)) with D² half the mean squared successive difference of
	// the residuals (von Neumann), which estimates the white-noise part alone. It is
	// near zero when the model fits and the residuals are noise.
	Misfit float64
	// Evaluations counts the evaluations of the projected residual sum of squares.
	Evaluations int
}

// Err returns nil when the fit succeeded, else the sentinel error of its status.
func (r *LumpedResult) Err() error { return r.Status.Err() }

// Value evaluates the fitted curve at t seconds from the segment start, with the
// ambient held at r.Ambient.
func (r *LumpedResult) Value(t float64) float64 {
	return r.Ambient + r.Excess*math.Exp(-t/r.Tau)
}

// minExcessSE is how many standard errors the fitted initial excess must lie from zero
// for the decay to count as resolved.
const minExcessSE = 3

// FitLumped fits the lumped-capacitance curve by variable projection: for a fixed τ
// the ambient and θi enter linearly and have a closed form (centred normal equations),
// so only τ is searched: Gauss–Newton steps in ln τ from a three-window estimate,
// with a grid in ln τ, regula falsi on the derivative and golden-section search as
// the fallbacks. It returns the result and result.Err().
//
// The 1-D search is written here because gonum/optimize has no scalar minimiser (its
// line searches need gradients and a descent direction) and because one Gauss–Newton
// step of the projected problem costs a single pass over the readings.
func FitLumped(p LumpedProblem, settings *LumpedSettings) (LumpedResult, error) {
	p.check()
	var s LumpedSettings
	if settings != nil {
		s = *settings
	}
	n := len(p.Times)
	res := LumpedResult{N: n, Free: p.free(), AmbientErr: math.NaN(), ExcessErr: math.NaN(), TauErr: math.NaN()}
	span := 0.0
	if n > 0 {
		span = p.Times[n-1] - p.Times[0]
	}
	s = s.withDefaults(res.Free, span)
	switch {
	case n < s.MinPoints:
		res.Status = FitTooFewPoints
	case span <= 0 || span < s.MinSpan:
		res.Status = FitShortSpan
	}
	if res.Status != FitNotRun {
		return res, res.Err()
	}
	v := newProjection(&p)
	defer v.release()
	tau, ok := v.search(s)
	res.Evaluations = v.evals
	res.Tau = tau
	res.Ambient, res.Excess, _ = v.solve(tau)
	if p.Ambient != nil {
		res.Ambient = p.Ambient[n-1]
	}
	if !ok {
		res.Status = FitNoDecay
		return res, res.Err()
	}
	res.finish(v, &p)
	return res, res.Err()
}

// finish fills the residual statistics and the covariance at the optimum.
func (r *LumpedResult) finish(v *projection, p *LumpedProblem) {
	at := v.eval(r.Tau)
	st := v.stats(at.amb, at.exc, r.Tau)
	r.RMSE = math.Sqrt(st.ssr / float64(r.N))
	r.Sigma = math.Sqrt(st.ssr / float64(r.N-r.Free))
	r.Rho = st.rho
	r.Misfit = math.Sqrt(max(0, r.RMSE*r.RMSE-st.vonNeumann))
	cov, ok := covariance(p, at.jtj, r.Sigma)
	if !ok {
		r.Status = FitSingular
		return
	}
	r.Cov = cov
	r.Status = FitSuccess
	r.AmbientErr, r.ExcessErr, r.TauErr = stdErr(cov, 0), stdErr(cov, 1), stdErr(cov, 2)
	if !p.FixExcess && math.Abs(r.Excess) < minExcessSE*r.ExcessErr {
		r.Status = FitNoDecay
	}
}

func stdErr(cov *mat.SymDense, i int) float64 { return math.Sqrt(cov.At(i, i)) }

// residualStats summarises residuals in time order.
type residualStats struct {
	ssr        float64 // sum of squares
	rho        float64 // lag-1 autocorrelation (0 when undefined)
	vonNeumann float64 // half the mean squared successive difference (0 when undefined)
}

// stats computes the residual statistics of the curve (amb, exc, τ) in one pass.
func (v *projection) stats(amb, exc, tau float64) residualStats {
	v.decay(tau)
	var st residualStats
	var lag, diff, prev float64
	for i, y := range v.y {
		r := y - amb - exc*v.e[i]
		st.ssr += r * r
		if i > 0 {
			lag += r * prev
			diff += (r - prev) * (r - prev)
		}
		prev = r
	}
	if st.ssr > 0 {
		st.rho = lag / st.ssr
	}
	if n := len(v.y); n > 1 {
		st.vonNeumann = diff / float64(2*(n-1))
	}
	return st
}

// covariance returns σ²·(JᵀJ)⁻¹ embedded in the 3×3 order ambient, excess, tau from
// JᵀJ g of the fitted parameters (projected.jtj), scaled to a unit diagonal before
// the inversion for conditioning.
func covariance(p *LumpedProblem, g [3][3]float64, sigma float64) (*mat.SymDense, bool) {
	idx := freeIndexes(p)
	k := len(idx)
	n := mat.NewSymDense(k, nil)
	for a, pa := range idx {
		for b := a; b < k; b++ {
			n.SetSym(a, b, g[pa][idx[b]])
		}
	}
	inv, ok := normalInverse(n, sigma)
	if !ok {
		return nil, false
	}
	cov := mat.NewSymDense(3, nil)
	for a, pa := range idx {
		for b, pb := range idx[a:] {
			cov.SetSym(pa, pb, inv.At(a, a+b))
		}
	}
	return cov, true
}

// freeIndexes lists the fitted parameters of p as indexes into (ambient, excess, tau).
func freeIndexes(p *LumpedProblem) []int {
	switch p.free() {
	case 3:
		return []int{0, 1, 2}
	case 2:
		return []int{1, 2}
	}
	return []int{2}
}
