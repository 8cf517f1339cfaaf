package conduction

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Least squares, written here: gonum/optimize has general minimisers (BFGS,
// Nelder–Mead, …) but no nonlinear least-squares solver that uses the residual
// structure, and the problems are tiny (two or three parameters) with residuals
// that are costly (an FV run each), so a small Levenberg–Marquardt with a forward-
// difference Jacobian needs the fewest evaluations. gonum/mat does the 3×3 algebra.

// lsProblem is a nonlinear least-squares problem: residuals r(x) of length n.
type lsProblem struct {
	n     int
	resid func(x, r []float64) // fills r; +Inf or NaN entries mark x as infeasible
	step  []float64            // forward-difference step per parameter
}

// errNoProgress reports a Levenberg–Marquardt run that could not lower the cost.
var errNoProgress = errors.New("conduction: least squares made no progress")

// levenberg minimises Σr² from x0 (changed in place to the solution). It returns
// the residuals and Jacobian at the solution and the number of iterations.
func levenberg(pb lsProblem, x []float64, maxIter int) (r []float64, jac *mat.Dense, iters int, err error) {
	p := len(x)
	r, trial := make([]float64, pb.n), make([]float64, pb.n)
	pb.resid(x, r)
	cost := sumSq(r)
	if !finite(cost) {
		return nil, nil, 0, errors.New("conduction: residuals not finite at the starting point")
	}
	jac = mat.NewDense(pb.n, p, nil)
	lambda := 1e-3
	xt := make([]float64, p)
	for iters = 1; iters <= maxIter; iters++ {
		jacobian(pb, x, r, jac)
		a, g := normal(jac, r)
		improved := false
		for lambda < 1e12 {
			delta, ok := damped(a, g, lambda)
			if !ok {
				lambda *= 10
				continue
			}
			for i := range x {
				xt[i] = x[i] + delta[i]
			}
			pb.resid(xt, trial)
			if c := sumSq(trial); finite(c) && c < cost {
				done := (cost-c) <= 1e-10*cost || small(delta, x)
				copy(x, xt)
				r, trial = trial, r
				cost = c
				lambda = math.Max(lambda/10, 1e-12)
				improved = true
				if done {
					jacobian(pb, x, r, jac)
					return r, jac, iters, nil
				}
				break
			}
			lambda *= 10
		}
		if !improved {
			jacobian(pb, x, r, jac)
			if iters == 1 {
				return r, jac, iters, errNoProgress
			}
			return r, jac, iters, nil // at a minimum to working precision
		}
	}
	jacobian(pb, x, r, jac)
	return r, jac, maxIter, nil
}

// jacobian fills jac with forward differences of the residuals about x (r = r(x)).
func jacobian(pb lsProblem, x, r []float64, jac *mat.Dense) {
	xs := append([]float64(nil), x...)
	rs := make([]float64, pb.n)
	for j := range x {
		xs[j] = x[j] + pb.step[j]
		pb.resid(xs, rs)
		for i := range rs {
			jac.Set(i, j, (rs[i]-r[i])/pb.step[j])
		}
		xs[j] = x[j]
	}
}

// normal returns JᵀJ and Jᵀr.
func normal(jac *mat.Dense, r []float64) (*mat.SymDense, *mat.VecDense) {
	_, p := jac.Dims()
	a := mat.NewSymDense(p, nil)
	a.SymOuterK(1, jac.T())
	g := mat.NewVecDense(p, nil)
	g.MulVec(jac.T(), mat.NewVecDense(len(r), r))
	return a, g
}

// damped solves (A + λ·diag A)·δ = −g.
func damped(a *mat.SymDense, g *mat.VecDense, lambda float64) ([]float64, bool) {
	p := a.SymmetricDim()
	b := mat.NewSymDense(p, nil)
	b.CopySym(a)
	for i := range p {
		d := a.At(i, i)
		if d == 0 {
			d = 1
		}
		b.SetSym(i, i, d*(1+lambda))
	}
	var ch mat.Cholesky
	if !ch.Factorize(b) {
		return nil, false
	}
	delta := mat.NewVecDense(p, nil)
	if err := ch.SolveVecTo(delta, g); err != nil {
		return nil, false
	}
	out := make([]float64, p)
	for i := range out {
		out[i] = -delta.AtVec(i)
	}
	return out, true
}

// covariance returns s²·(JᵀJ)⁻¹, s² = Σr²/(n − p), the parameter covariance at a
// least-squares optimum with independent residuals; nil where JᵀJ is singular or
// n <= p.
func covariance(jac *mat.Dense, r []float64) *mat.SymDense {
	n, p := jac.Dims()
	if n <= p {
		return nil
	}
	a, _ := normal(jac, r)
	var ch mat.Cholesky
	if !ch.Factorize(a) {
		return nil
	}
	inv := mat.NewSymDense(p, nil)
	if err := ch.InverseTo(inv); err != nil {
		return nil
	}
	inv.ScaleSym(sumSq(r)/float64(n-p), inv)
	return inv
}

// stdErrors returns the square roots of cov's diagonal, p NaNs when cov is nil.
func stdErrors(cov *mat.SymDense, p int) []float64 {
	out := make([]float64, p)
	for i := range out {
		out[i] = math.NaN()
		if cov != nil {
			out[i] = math.Sqrt(cov.At(i, i))
		}
	}
	return out
}

func sumSq(r []float64) float64 {
	s := 0.0
	for _, v := range r {
		s += v * v
	}
	return s
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// small reports whether every step is below 1e-8 of its parameter (or absolutely).
func small(delta, x []float64) bool {
	for i, d := range delta {
		if math.Abs(d) > 1e-8*math.Max(1, math.Abs(x[i])) {
			return false
		}
	}
	return true
}
