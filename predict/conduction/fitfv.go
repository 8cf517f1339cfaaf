package conduction

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// FVFit is the finite-volume model with the nonlinear surface coefficient
// h(Ts) = Scale·NaturalH fitted to a curve.
type FVFit struct {
	// Specimen is the specimen fitted.
	Specimen Specimen
	// Scale is the factor on the correlations' h (1: they hold as they stand).
	Scale Estimate
	// Initial is the uniform temperature at t = 0, °C.
	Initial Estimate
	// Ambient is the temperature the specimen settles toward, °C (StdErr 0 when
	// given).
	Ambient Estimate
	// HStart and HEnd are the fitted h, W/(m²·K), at the initial temperature and
	// at the fitted surface temperature of the last reading.
	HStart, HEnd float64
	// BiStart and BiEnd are h·Size/k at those two points.
	BiStart, BiEnd float64
	// RMSE is the root-mean-square residual, °C.
	RMSE float64
	// N is the number of readings fitted.
	N int
	// Iterations counts the Levenberg–Marquardt iterations.
	Iterations int
	// Series is the constant-h series fit the search started from.
	Series *SeriesFit
	// Cov is the covariance σ²·(JᵀJ)⁻¹ at the optimum, σ² = SSR/(N − p), of the
	// parameters in the order ln Scale, Initial, Ambient (the last only when the
	// ambient was fitted); nil when JᵀJ is singular. It takes the residuals as
	// independent: widen it for their autocorrelation before use.
	Cov *mat.SymDense

	until float64 // the last reading's time, s
	traj  *Trajectory
}

// FitFV fits the finite-volume model with h(Ts) = scale·NaturalH (natural
// convection and radiation from predict/surface) to readings taken at sp.Sensor
// (times and temperatures as for FitSeries): the scale factor and the initial
// temperature, and the ambient too when ambient is NaN. Only the one-dimensional
// shapes have an FV model; the others return an error matching ErrShape. A Slab
// needs its face height in sp.Length for the convection correlation.
//
// It starts from FitSeries (h from its Bi, divided by the correlations' h mid-way
// through the cooling) and refines by Levenberg–Marquardt (lm.go) over ln scale,
// T0 and T∞, each residual evaluation one FV run (DefaultCells cells) on a time
// schedule fixed from the starting point with twice its h, so the residuals are
// smooth in the parameters. Standard errors come from the final Jacobian.
func FitFV(sp Specimen, times, celsius []float64, ambient float64) (*FVFit, error) {
	if err := checkReadings(sp, times, celsius, ambient); err != nil {
		return nil, fmt.Errorf("finite-volume fit: %w", err)
	}
	if _, _, err := sp.Convection(); err != nil {
		return nil, fmt.Errorf("finite-volume fit: %w", err)
	}
	start, err := FitSeries(sp, times, celsius, ambient)
	if err != nil {
		return nil, fmt.Errorf("finite-volume fit: %w", err)
	}
	fp := newFVProblem(sp, times, celsius, ambient, start)
	x := fp.start()
	r, jac, iters, err := levenberg(fp.problem(), x, 50)
	if err != nil && !errors.Is(err, errNoProgress) {
		return nil, fmt.Errorf("finite-volume fit: %w", err)
	}
	cov := covariance(jac, r)
	se := stdErrors(cov, len(x))
	f := &FVFit{Cov: cov, Specimen: sp, N: len(times), Iterations: iters, Series: start, RMSE: math.Sqrt(sumSq(r) / float64(len(r)))}
	scale, t0, amb := fp.unpack(x)
	f.Scale = Estimate{scale, scale * se[0]}
	f.Initial = Estimate{t0, se[1]}
	f.Ambient = Estimate{amb, 0}
	if len(x) == 3 {
		f.Ambient.StdErr = se[2]
	}
	h := NaturalH(sp, scale, amb)
	last := times[len(times)-1]
	f.until = last
	if f.traj, err = settledRun(sp, h, amb, t0, last); err != nil {
		return nil, fmt.Errorf("finite-volume fit: %w", err)
	}
	f.HStart, f.HEnd = h(t0), h(f.traj.At(Surface, last))
	f.BiStart, f.BiEnd = sp.Biot(f.HStart), sp.Biot(f.HEnd)
	return f, nil
}

// settledRun runs the fitted model from 0 to at least until and on, doubling the
// horizon, until the centre's excess is below 0.5 % of the initial excess (or a
// horizon of 1000·until), so forecasts past the readings need no extrapolation.
func settledRun(sp Specimen, h func(float64) float64, amb, t0, until float64) (*Trajectory, error) {
	m := &FV{Shape: sp.Shape, Size: sp.Size, Conductivity: sp.Conductivity, Diffusivity: sp.Diffusivity(), Ambient: amb, H: h}
	for horizon := until; ; horizon *= 2 {
		tr, err := m.Run(t0, horizon)
		if err != nil {
			return nil, err
		}
		excess := tr.At(Centre, horizon) - amb
		if math.Abs(excess) <= 0.005*math.Abs(t0-amb) || horizon >= 1000*until {
			return tr, nil
		}
	}
}

// fvProblem is the least-squares problem of FitFV.
type fvProblem struct {
	sp       Specimen
	times, y []float64
	ambient  float64 // NaN: fitted
	first    *SeriesFit
	model    *FV
	grid     *grid
	sched    []float64
}

func newFVProblem(sp Specimen, times, y []float64, ambient float64, first *SeriesFit) *fvProblem {
	fp := &fvProblem{sp: sp, times: times, y: y, ambient: ambient, first: first}
	fp.model = &FV{Shape: sp.Shape, Size: sp.Size, Conductivity: sp.Conductivity, Diffusivity: sp.Diffusivity()}
	fp.grid = newGrid(fp.model)
	return fp
}

// start returns the starting parameters [ln scale, T0, (T∞)] from the series fit
// and fixes the time schedule.
func (fp *fvProblem) start() []float64 {
	t0, amb := fp.first.Initial.Value, fp.first.Ambient.Value
	mid := NaturalH(fp.sp, 1, amb)(amb + 0.5*(t0-amb))
	scale := 1.0
	if mid > 0 && fp.first.H.Value > 0 && !fp.first.AtBound {
		scale = fp.first.H.Value / mid
	}
	fp.model.Ambient, fp.model.H = amb, NaturalH(fp.sp, 2*scale, amb)
	fp.sched = fp.grid.schedule(t0, fp.times[len(fp.times)-1])
	x := []float64{math.Log(scale), t0}
	if math.IsNaN(fp.ambient) {
		x = append(x, amb)
	}
	return x
}

func (fp *fvProblem) unpack(x []float64) (scale, t0, amb float64) {
	amb = fp.ambient
	if len(x) == 3 {
		amb = x[2]
	}
	return math.Exp(x[0]), x[1], amb
}

func (fp *fvProblem) problem() lsProblem {
	excess := math.Max(1, math.Abs(fp.first.Initial.Value-fp.first.Ambient.Value))
	step := []float64{1e-4, 1e-4 * excess, 1e-4 * excess}
	if !math.IsNaN(fp.ambient) {
		step = step[:2]
	}
	return lsProblem{n: len(fp.times), resid: fp.resid, step: step}
}

// resid runs the model at x and fills r with reading − model at the sensor,
// interpolating linearly between steps.
func (fp *fvProblem) resid(x, r []float64) {
	scale, t0, amb := fp.unpack(x)
	if !finite(scale) || scale > 1e6 || !finite(t0) || !finite(amb) {
		r[0] = math.Inf(1)
		return
	}
	fp.model.Ambient, fp.model.H = amb, NaturalH(fp.sp, scale, amb)
	j, prevT, prevV := 0, 0.0, 0.0
	times, p := fp.times, fp.sp.Sensor
	fp.grid.run(t0, fp.sched, func(t float64, T []float64) {
		v := fp.grid.sample(T, p)
		for ; j < len(times) && times[j] <= t; j++ {
			f := 1.0
			if t > prevT {
				f = (times[j] - prevT) / (t - prevT)
			}
			r[j] = fp.y[j] - (prevV + f*(v-prevV))
		}
		prevT, prevV = t, v
	})
}

// Temperature returns the fitted temperature, °C, at position p and t seconds.
func (f *FVFit) Temperature(p Position, t float64) float64 { return f.traj.At(p, t) }

// Hottest returns the temperature of the hottest point at t: the centre while
// cooling, the surface while heating.
func (f *FVFit) Hottest(t float64) float64 {
	if f.Initial.Value < f.Ambient.Value {
		return f.traj.At(Surface, t)
	}
	return f.traj.At(Centre, t)
}

// Varied returns the fit with its parameters moved by dp, in the order of Cov (ln
// Scale, Initial, Ambient; missing entries count as 0), for numerical derivatives
// of whatever a caller computes from a fit, such as a crossing time: one more FV
// run. Its Estimates keep the moved values and the original standard errors.
func (f *FVFit) Varied(dp []float64) (Fit, error) {
	d := make([]float64, 3)
	copy(d, dp)
	g := *f
	g.Scale.Value *= math.Exp(d[0])
	g.Initial.Value += d[1]
	g.Ambient.Value += d[2]
	h := NaturalH(g.Specimen, g.Scale.Value, g.Ambient.Value)
	tr, err := settledRun(g.Specimen, h, g.Ambient.Value, g.Initial.Value, g.until)
	if err != nil {
		return nil, fmt.Errorf("finite-volume fit varied by %v: %w", dp, err)
	}
	g.traj = tr
	return &g, nil
}

// Trajectory returns the fitted model's full solution, from 0 until the centre has
// settled to within 0.5 % of the initial excess.
func (f *FVFit) Trajectory() *Trajectory { return f.traj }
