package predict

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/settle-lab/settle/predict/surface"
)

// The laws the checks below run on: the unknown specimen's still-air default, the
// steel bar's cylinder, a sphere and a moving-air law (constant convection).
var checkLaws = []SurfaceLaw{
	DefaultSurfaceLaw,
	{Geometry: surface.HorizontalCylinder, LengthM: 0.05, Emissivity: 0.7},
	{Geometry: surface.Sphere, LengthM: 0.04, Emissivity: 0.1},
	{ForcedH: 40, Emissivity: 0.4},
}

// hShift must give H's value to the last bit and, as its derivative, a central finite
// difference of H with both temperatures shifted (1e-4 K, the film temperature kept
// off the air table's rows) to 1e-6 relative.
func TestHShiftMatchesH(t *testing.T) {
	const d = 1e-4
	for _, law := range checkLaws {
		for _, amb := range []float64{-10, 22, 80} {
			for _, theta := range []float64{-40, -3, 0.01, 2.5, 17, 140, 600} {
				ts := amb + theta
				if film := (ts+amb)/2 + surface.ZeroCelsius; math.Abs(film-50*math.Round(film/50)) < 10*d {
					continue
				}
				h, dh := law.hShift(ts, amb)
				if h != law.H(ts, amb) {
					t.Fatalf("%+v at %g in %g: hShift %.17g, H %.17g", law, ts, amb, h, law.H(ts, amb))
				}
				fd := (law.H(ts+d, amb+d) - law.H(ts-d, amb-d)) / (2 * d)
				if math.Abs(dh-fd) > 1e-6*math.Abs(fd)+1e-9*h {
					t.Errorf("%+v at %g in %g: dh/dT∞ %.10g, finite difference %.10g", law, ts, amb, dh, fd)
				}
			}
		}
	}
	// Where the law is clamped to minH, h does not move.
	cold := SurfaceLaw{Geometry: surface.VerticalPlate, LengthM: 0.1}
	if h, dh := cold.hShift(20, 20); h != minH || dh != 0 {
		t.Errorf("clamped: %g, %g; want %g, 0", h, dh, minH)
	}
}

// A table's Φa (atA) must be the derivative of Φ in the ambient at a fixed excess:
// the central difference of two tables at T∞ ± 1e-4 K (the finite difference the fit
// took before Φa was tabulated) agrees to 1e-6 relative on differences of Φa (all
// the model uses), inside and beyond the table, for laws on both sides of the
// ambient; and slopeAt must be the derivative of at in w.
func TestPhiTableAmbientDerivative(t *testing.T) {
	const d = 1e-4
	for _, law := range checkLaws {
		for _, side := range []float64{1, -1} {
			amb := 22.0
			if side < 0 {
				amb = 60
			}
			tb := newPhiTable(law, amb, side, 900, true)
			up := newPhiTable(law, amb+d, side, 900, false)
			down := newPhiTable(law, amb-d, side, 900, false)
			checkPhiColumn(t, fmt.Sprintf("%+v side %g", law, side), "Φa", side, tb.atA, up, down, d)
			for _, w := range phiCheckExcesses(side) {
				const dw = 1e-6
				if fd := (tb.at(w+dw) - tb.at(w-dw)) / (2 * dw); math.Abs(tb.slopeAt(w)-fd) > 1e-6*math.Abs(fd) {
					t.Errorf("%+v side %g: slopeAt(%g) = %.10g, difference of at %.10g", law, side, w, tb.slopeAt(w), fd)
				}
			}
			// Φ and 1/h are the same to the last bit with or without the derivative
			// (both completed, so from the same first node).
			plain, full := newPhiTable(law, amb, side, 900, false), newPhiTable(law, amb, side, 900, true)
			plain.complete()
			full.complete()
			if !slices.Equal(plain.phi, full.phi) || !slices.Equal(plain.inv, full.inv) {
				t.Errorf("%+v side %g: the table's Φ or 1/h differ with the derivative", law, side)
			}
		}
	}
}

// invertBasis is phiTable.invert as it was written before the cubic was put in powers
// of s (the Hermite basis evaluated at each Newton step): the reference for
// TestInvertMatchesBasisForm.
func invertBasis(tb *phiTable, f float64) (w, h float64) {
	tb.cover(f)
	i := tb.lo + max(0, min(sort.SearchFloat64s(tb.phi[tb.lo:tb.hi+1], f)-1, tb.hi-tb.lo-1))
	df := tb.phi[i+1] - tb.phi[i]
	u := (f - tb.phi[i]) / df
	s := hermiteAt(u, 0, 1, 0, 1, df/(phiStep*tb.inv[i]), df/(phiStep*tb.inv[i+1]))
	s = max(0, min(1, s))
	for range 8 {
		d := tb.hermite(i, s) - f
		next := max(0, min(1, s-d/tb.slope(i, s)))
		step := math.Abs(next - s)
		s = next
		if step < 1e-13 {
			break
		}
	}
	return phiLow + (float64(i)+s)*phiStep, phiStep / tb.slope(i, s)
}

// invert (powers of s, stopped by the curvature bound) must agree with the Hermite
// basis form iterated until its step is below 1e-13 of a cell: w to 1e-12 and h to
// 1e-10 relative, and solve's excess with math.Exp of that w to 1e-11 (w's 1e-12),
// across a table's range, for every law.
func TestInvertMatchesBasisForm(t *testing.T) {
	for _, law := range checkLaws {
		tb := newPhiTable(law, 22, 1, 900, false)
		lo, hi := tb.at(-4), tb.at(6.5)
		hint := -1
		for k := range 2000 {
			f := lo + (hi-lo)*float64(k)/1999
			w, h := tb.invert(f, &hint)
			ww, hh := invertBasis(tb, f)
			if math.Abs(w-ww) > 1e-12 || math.Abs(h-hh) > 1e-10*hh {
				t.Fatalf("%+v: invert(%.15g) = %.15g, %.12g; basis form %.15g, %.12g", law, f, w, h, ww, hh)
			}
			if _, _, ew, _, _ := tb.solve(f, &hint); math.Abs(ew/math.Exp(ww)-1) > 1e-11 {
				t.Fatalf("%+v: solve(%.15g) excess %.15g, e^w %.15g", law, f, ew, math.Exp(ww))
			}
		}
	}
}

// The ambient column of the h(T) fit's Jacobian, from Φa, must match the derivative
// of the model in the ambient taken as the fit took it before: the residuals at
// T∞ ± 1e-4 K with w0 and q held, differenced (central), to 1e-5 of the column's
// scale; on the steel bar's binned readings under each law.
func TestJacobianAmbientColumn(t *testing.T) {
	p := hotBar()
	lr, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, law := range checkLaws {
		f := newHFit(HProblem{Times: p.Times, Celsius: p.Celsius, Law: law, AmbientPrior: roomPrior, AmbientPriorSD: roomPriorSD}, &lr, maxFitPoints)
		lm := &f.lm
		lm.x[2] += 0.7 // off the start, where nothing is special
		lm.jacobian()
		n := len(lm.m.ts)
		col := make([]float64, n)
		var scale float64
		for i := range n {
			col[i] = lm.jac.At(i, 2)
			scale = max(scale, math.Abs(col[i]))
		}
		const d = 1e-4
		rUp, rDown := make([]float64, n), make([]float64, n)
		at := func(amb float64, r []float64) {
			lm.m.residuals(newPhiTable(law, amb, lm.m.side, lm.m.tmax, false), lm.x[0], lm.x[1], r, nil, math.Inf(1))
		}
		at(lm.x[2]+d, rUp)
		at(lm.x[2]-d, rDown)
		for i := range n {
			// r = wt·(y − model): ∂model/∂T∞ = −∂r/∂T∞.
			fd := -(rUp[i] - rDown[i]) / (2 * d)
			if math.Abs(col[i]-fd) > 1e-5*scale {
				t.Fatalf("%+v row %d: ambient column %.10g, central difference %.10g (scale %.3g)", law, i, col[i], fd, scale)
			}
		}
	}
}

// hFitted.crossing's variance must be the delta method with the ambient sensitivity
// of the crossing time taken by central differences of refitted tables at T∞ ± 1e-4 K
// (w0 and q held; for a level the excess θL = level − T∞ moves with the ambient, for a
// band it is held), to 1e-6 relative; on the steel bar fitted with its ambient free.
func TestCrossingAmbientSensitivity(t *testing.T) {
	p := hotBar()
	lr, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	law := SurfaceLaw{Geometry: surface.HorizontalCylinder, LengthM: 0.05, Emissivity: 0.7}
	r, err := FitH(HProblem{Times: p.Times, Celsius: p.Celsius, Law: law, AmbientPrior: roomPrior, AmbientPriorSD: roomPriorSD}, &lr)
	if err != nil || !(r.AmbientErr > 0) {
		t.Fatalf("fit: %v, ambient error %g", err, r.AmbientErr)
	}
	const d = 1e-4
	crossAt := func(amb, thetaL float64) float64 {
		tb := newPhiTable(r.Law, amb, 1, r.tmax, false)
		return crossingH(tb, tb.at(r.w0), r.q, thetaL)
	}
	for _, within := range []bool{false, true} {
		for _, level := range []float64{400, 120, 50, 30} {
			tStar, v, _, ok := hFitted{&r}.crossing(level, within)
			if !ok {
				t.Fatalf("level %g: no crossing", level)
			}
			thetaL := level - r.Ambient
			up, down := thetaL-d, thetaL+d
			if within {
				up, down = thetaL, thetaL
			}
			g := [3]float64{1 / (r.Law.H(r.Initial, r.Ambient) * r.q), -tStar / r.q,
				(crossAt(r.Ambient+d, up) - crossAt(r.Ambient-d, down)) / (2 * d)}
			var want float64
			for a := range 3 {
				for b := range 3 {
					want += g[a] * r.Cov.At(a, b) * g[b]
				}
			}
			if math.Abs(v-want) > 1e-6*want {
				t.Errorf("level %g within %v: variance %.10g, with a central difference in the ambient %.10g", level, within, v, want)
			}
		}
	}
}

// normalEquations' written-out two- and three-column sums must equal the general
// loop's (kept here as the reference) exactly, and gonum's JᵀJ and Jᵀr to 1e-12
// relative, on random Jacobians of one to four columns (four: the h(T) fit with the
// emissivity free).
func TestNormalEquationsMatch(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	for trial := range 60 {
		k, n := 1+trial%4, 5+trial*7
		j := mat.NewDense(n, k, nil)
		r := make([]float64, n)
		for i := range n {
			r[i] = rng.NormFloat64()
			for c := range k {
				j.Set(i, c, rng.NormFloat64()*math.Pow(10, float64(3*c-3)))
			}
		}
		jtj, g := normalEquations(j, r)
		var a [4][4]float64
		var b [4]float64
		for i := range n {
			for p := range k {
				b[p] += j.At(i, p) * r[i]
				for q := p; q < k; q++ {
					a[p][q] += j.At(i, p) * j.At(i, q)
				}
			}
		}
		var ref mat.SymDense
		ref.SymOuterK(1, j.T())
		var refG mat.VecDense
		refG.MulVec(j.T(), mat.NewVecDense(n, r))
		for p := range k {
			if g.AtVec(p) != b[p] || math.Abs(g.AtVec(p)-refG.AtVec(p)) > 1e-12*mat.Norm(&refG, math.Inf(1)) {
				t.Fatalf("trial %d: Jᵀr[%d] = %.17g, loop %.17g, gonum %.17g", trial, p, g.AtVec(p), b[p], refG.AtVec(p))
			}
			for q := p; q < k; q++ {
				if jtj.At(p, q) != a[p][q] || math.Abs(jtj.At(p, q)-ref.At(p, q)) > 1e-12*math.Sqrt(ref.At(p, p)*ref.At(q, q)) {
					t.Fatalf("trial %d: JᵀJ[%d][%d] = %.17g, loop %.17g, gonum %.17g", trial, p, q, jtj.At(p, q), a[p][q], ref.At(p, q))
				}
			}
		}
	}
}

// solveSPD must solve as gonum's Cholesky does (mat.Cholesky, the reference): the
// same solution to 1e-9 relative (scaled by the condition number), on random
// symmetric positive definite matrices of one to four rows with unit diagonals plus
// a damping from 1e-24 to 1 (the Levenberg–Marquardt step's from 1e-12), whose
// condition numbers span 1 to beyond mat.ConditionTolerance; the same refusal where
// gonum's condition estimate is clearly past the tolerance (beyond a factor of 10,
// the estimate's slack) or the matrix is not positive definite.
func TestSolveSPDMatchesGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 42))
	var refused int
	for trial := range 3000 {
		k := 1 + trial%4
		// Columns of a random Jacobian, nearly collinear for some trials.
		near := math.Pow(10, -rng.Float64()*12)
		j := mat.NewDense(k+3, k, nil)
		for r := range k + 3 {
			base := rng.NormFloat64()
			for c := range k {
				j.Set(r, c, base+near*float64(c)*rng.NormFloat64())
			}
		}
		var n mat.SymDense
		n.SymOuterK(1, j.T())
		// The step's damping stays at or above 1e-12, which bounds the condition
		// number near 3e12; smaller ones here reach the tolerance too.
		lambda := math.Pow(10, -24*rng.Float64())
		var a [4][4]float64
		var b [4]float64
		sym := mat.NewSymDense(k, nil)
		for r := range k {
			for c := range k {
				a[r][c] = n.At(r, c) / math.Sqrt(n.At(r, r)*n.At(c, c))
			}
			a[r][r] = 1 + lambda
			b[r] = rng.NormFloat64()
			for c := r; c < k; c++ {
				sym.SetSym(r, c, a[r][c])
			}
		}
		x, ok := solveSPD(a, b, k)
		var ch mat.Cholesky
		if !ch.Factorize(sym) {
			if ok {
				t.Fatalf("trial %d: gonum refused the matrix, solveSPD accepted", trial)
			}
			continue
		}
		var want mat.VecDense
		err := ch.SolveVecTo(&want, mat.NewVecDense(k, b[:k]))
		cond := ch.Cond()
		switch {
		case cond > 10*mat.ConditionTolerance && ok, cond < mat.ConditionTolerance/10 && !ok:
			t.Fatalf("trial %d: condition %.3g (gonum error %v), solveSPD ok %v", trial, cond, err, ok)
		case !ok:
			refused++
			continue
		}
		scale := mat.Norm(&want, math.Inf(1))
		for r := range k {
			if math.Abs(x[r]-want.AtVec(r)) > 1e-9*cond*scale/1e6+1e-12*scale {
				t.Fatalf("trial %d (condition %.3g): x[%d] = %.15g, gonum %.15g", trial, cond, r, x[r], want.AtVec(r))
			}
		}
	}
	if refused == 0 {
		t.Error("no matrix was refused: the condition check went untested")
	}
	if _, ok := solveSPD([4][4]float64{{1, 2}, {2, 1}}, [4]float64{1, 1}, 2); ok {
		t.Error("an indefinite matrix was accepted")
	}
}

// gridExp must be math.Exp of the grid's nodes and midpoints exactly (the table's
// values do not change), on and off the stored grid; expCell must agree with math.Exp
// of the same w to 1e-14 relative (the rounding of w itself, up to 2e-15 at w = 18,
// moves e^w by as much) across every cell and off the grid.
func TestGridExp(t *testing.T) {
	for i := -3; i < expGridNodes+3; i++ {
		for half := range 2 {
			if got, want := gridExp(i, half), math.Exp(phiLow+(float64(i)+0.5*float64(half))*phiStep); got != want {
				t.Fatalf("gridExp(%d, %d) = %.17g, math.Exp %.17g", i, half, got, want)
			}
		}
		for k := range 41 {
			s := float64(k) / 40
			want := math.Exp(phiLow + (float64(i)+s)*phiStep)
			if got := expCell(i, s); math.Abs(got/want-1) > 1e-14 {
				t.Fatalf("expCell(%d, %g) = %.17g, math.Exp %.17g", i, s, got, want)
			}
		}
	}
}

// unit must clamp as max(0, min(1, s)) does, NaN included (signed zeros aside).
func TestUnitClamps(t *testing.T) {
	for _, s := range []float64{-3, -1e-300, 0, 1e-17, 0.3, 1, 1 + 1e-15, 7, math.Inf(1), math.Inf(-1)} {
		if got, want := unit(s), max(0, min(1, s)); got != want {
			t.Errorf("unit(%g) = %g, want %g", s, got, want)
		}
	}
	if !math.IsNaN(unit(math.NaN())) {
		t.Error("unit(NaN) is not NaN")
	}
}

// Φe = ∂Φ/∂ε (newPhiTableE's emis) must match the central difference of two tables
// at ε ± 1e-4 to 1e-6 relative on differences of Φe (all the model uses), inside
// and beyond the table, on both sides of the ambient, with and without the ambient
// derivative; and the extra columns must leave Φ, 1/h and Φa the same to the last bit.
func TestPhiTableEmissivityDerivative(t *testing.T) {
	const d = 1e-4
	for _, law := range checkLaws {
		for _, side := range []float64{1, -1} {
			amb := 22.0
			if side < 0 {
				amb = 60
			}
			for _, deriv := range []bool{false, true} {
				tb := newPhiTableE(law, amb, side, 900, deriv, true)
				up, down := law, law
				up.Emissivity += d
				down.Emissivity -= d
				tu, td := newPhiTable(up, amb, side, 900, false), newPhiTable(down, amb, side, 900, false)
				checkPhiColumn(t, fmt.Sprintf("%+v side %g", law, side), "Φe", side, tb.atE, tu, td, d)
				plain := newPhiTable(law, amb, side, 900, deriv)
				plain.complete()
				tb.complete()
				if !slices.Equal(plain.phi, tb.phi) || !slices.Equal(plain.inv, tb.inv) || !slices.Equal(plain.phiA, tb.phiA) {
					t.Errorf("%+v side %g: Φ, 1/h or Φa differ with the emissivity derivative", law, side)
				}
			}
		}
	}
}

// The emissivity column of the h(T) fit's Jacobian (the last, with the emissivity
// fitted) must match the residuals at ε ± 1e-4 with w0, q and T∞ held, differenced
// (central), to 1e-5 of the column's scale; the other columns must be those of the
// fit without it; on the steel bar's binned readings, the ambient fitted and
// measured.
func TestJacobianEmissivityColumn(t *testing.T) {
	p := hotBar()
	lr, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, law := range checkLaws[:3] {
		for _, measured := range []bool{false, true} {
			hp := HProblem{Times: p.Times, Celsius: p.Celsius, Law: law, AmbientPrior: roomPrior, AmbientPriorSD: roomPriorSD}
			if measured {
				hp.Ambient = constant(len(p.Times), 22)
			}
			plain := newHFit(hp, &lr, maxFitPoints)
			f := newHFit(hp, &lr, maxFitPoints)
			lm := &f.lm
			lm.x = append(lm.x, law.Emissivity)
			lm.free++
			lm.emis = &emisParam{lo: 0, hi: 1, crit: 1}
			lm.x[0] += 0.01 // off the start, where nothing is special
			plain.lm.x[0] = lm.x[0]
			lm.jacobian()
			plain.lm.jacobian()
			n, k := len(lm.m.ts), lm.free
			var scale float64
			for i := range n {
				scale = max(scale, math.Abs(lm.jac.At(i, k-1)))
				for c := range k - 1 {
					if lm.jac.At(i, c) != plain.lm.jac.At(i, c) {
						t.Fatalf("%+v measured %v row %d column %d: %.17g, without the emissivity %.17g", law, measured, i, c, lm.jac.At(i, c), plain.lm.jac.At(i, c))
					}
				}
			}
			const d = 1e-4
			rUp, rDown := make([]float64, n), make([]float64, n)
			at := func(e float64, r []float64) {
				l := law
				l.Emissivity = e
				lm.m.residuals(newPhiTable(l, lm.x[2], lm.m.side, lm.m.tmax, false), lm.x[0], lm.x[1], r, nil, math.Inf(1))
			}
			at(law.Emissivity+d, rUp)
			at(law.Emissivity-d, rDown)
			for i := range n {
				fd := -(rUp[i] - rDown[i]) / (2 * d)
				if math.Abs(lm.jac.At(i, k-1)-fd) > 1e-5*scale {
					t.Fatalf("%+v measured %v row %d: emissivity column %.10g, central difference %.10g (scale %.3g)", law, measured, i, lm.jac.At(i, k-1), fd, scale)
				}
			}
		}
	}
}

// phiCheckExcesses are the log-excesses w at which a table's derivative columns are
// checked: inside and beyond the table, and below the ambient only while the excess
// stays above absolute zero.
func phiCheckExcesses(side float64) []float64 {
	var out []float64
	for _, w := range []float64{-9, -2, 0.5, 2.2, 3.9, 5.5, 6.9, 8} {
		if side > 0 || w <= 4 {
			out = append(out, w)
		}
	}
	return out
}

// checkPhiColumn compares differences of a table's derivative column col (Φa or Φe)
// with the central difference of the tables up and down, built at the parameter ± d,
// to 1e-6 relative: the model uses only such differences.
func checkPhiColumn(t *testing.T, label, sym string, side float64, col func(float64) float64, up, down *phiTable, d float64) {
	t.Helper()
	const ref = 1.3
	for _, w := range phiCheckExcesses(side) {
		got := col(w) - col(ref)
		want := ((up.at(w) - up.at(ref)) - (down.at(w) - down.at(ref))) / (2 * d)
		if math.Abs(got-want) > 1e-6*math.Abs(want)+1e-12 {
			t.Errorf("%s: %s(%g) − %s(%g) = %.10g, central difference %.10g", label, sym, w, sym, ref, got, want)
		}
	}
}
