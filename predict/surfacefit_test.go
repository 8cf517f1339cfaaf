package predict

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/settle-lab/settle/predict/surface"
)

// simulateH integrates C·dT/dt = −h(T)·(T − T∞) by classical RK4 with a 0.25 s step
// (independently of FitH's tabulated solution) and samples it every `every` seconds.
func simulateH(law SurfaceLaw, c, amb, t0c, every, end float64) LumpedProblem {
	var p LumpedProblem
	f := func(T float64) float64 { return -law.H(T, amb) * (T - amb) / c }
	const dt = 0.25
	T := t0c
	for i := 0; float64(i)*dt <= end; i++ {
		s := float64(i) * dt
		if math.Mod(s, every) == 0 {
			p.Times, p.Celsius = append(p.Times, s), append(p.Celsius, T)
		}
		k1 := f(T)
		k2 := f(T + dt/2*k1)
		k3 := f(T + dt/2*k2)
		k4 := f(T + dt*k3)
		T += dt / 6 * (k1 + 2*k2 + 2*k3 + k4)
	}
	return p
}

// A 50 mm steel bar (our own case; ρc·V/A = 7800·470·0.0125 J/m²K) from 600 °C and a
// cold block warming: FitH must recover T0, T∞ and C from an RK4 solution of the same
// ODE, which checks the tabulated integral, its inversion and the fit together.
func TestFitHRecoversODE(t *testing.T) {
	cases := []struct {
		name             string
		law              SurfaceLaw
		c, amb, t0, span float64
	}{
		{"hot steel cylinder", SurfaceLaw{Geometry: surface.HorizontalCylinder, LengthM: 0.05, Emissivity: 0.7}, 7800 * 470 * 0.0125, 22, 600, 1800},
		{"cold block warming", SurfaceLaw{Geometry: surface.VerticalPlate, LengthM: 0.2, Emissivity: 0.9}, 2300 * 880 * 0.02, 23, -20, 7200},
		{"aluminium sphere", SurfaceLaw{Geometry: surface.Sphere, LengthM: 0.04, Emissivity: 0.1}, 2702 * 903 * 0.02 / 3, 20, 300, 3600},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := simulateH(c.law, c.c, c.amb, c.t0, 5, c.span)
			lr, err := FitLumped(p, nil)
			if err != nil {
				t.Fatal(err)
			}
			hr, err := FitH(HProblem{Times: p.Times, Celsius: p.Celsius, Law: c.law}, &lr)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(hr.Initial-c.t0) > 1e-3 || math.Abs(hr.Ambient-c.amb) > 1e-3 || math.Abs(hr.Capacity/c.c-1) > 1e-5 {
				t.Errorf("T0 %.5f, T∞ %.5f, C %.6g; want %g, %g, %g", hr.Initial, hr.Ambient, hr.Capacity, c.t0, c.amb, c.c)
			}
			if hr.RMSE > 1e-3 {
				t.Errorf("rms %g K on exact data", hr.RMSE)
			}
			mid := p.Times[len(p.Times)/2]
			if got, want := hr.Value(mid), p.Celsius[len(p.Times)/2]; math.Abs(got-want) > 1e-3 {
				t.Errorf("Value(%g) = %.5f, want %.5f", mid, got, want)
			}
		})
	}
}

// The Φ table must invert itself: Φ⁻¹(Φ(w)) = w across and beyond the table.
func TestPhiTableInverts(t *testing.T) {
	tb := newPhiTable(DefaultSurfaceLaw, 20, 1, 900, false)
	hint := -1
	for w := -9.0; w < 8; w += 0.0137 {
		got, _ := tb.invert(tb.at(w), &hint)
		if math.Abs(got-w) > 1e-9 {
			t.Fatalf("invert(at(%g)) = %.12g", w, got)
		}
	}
}

func benchmarkH(b *testing.B, fit func(p LumpedProblem)) {
	law := SurfaceLaw{Geometry: surface.HorizontalCylinder, LengthM: 0.05, Emissivity: 0.7}
	p := simulateH(law, 7800*470*0.0125, 22, 600, 1, 1999)
	rng := rand.New(rand.NewPCG(15, 16))
	for i := range p.Celsius {
		p.Celsius[i] = 0.1 * math.Round((p.Celsius[i]+0.1*rng.NormFloat64())/0.1)
	}
	benchmarkCurve(b, p, fit)
}

// BenchmarkFitH2000 fits the h(T) model to 2,000 readings of a cooling steel bar.
func BenchmarkFitH2000(b *testing.B) {
	benchmarkH(b, func(p LumpedProblem) {
		lr, _ := FitLumped(p, nil)
		if _, err := FitH(HProblem{Times: p.Times, Celsius: p.Celsius, Law: DefaultSurfaceLaw}, &lr); err != nil {
			b.Fatal(err)
		}
	})
}

// BenchmarkAnalyze2000 is the whole engine on 2,000 readings: both models, the
// emissivity profile, the choice and one target's forecast.
func BenchmarkAnalyze2000(b *testing.B) {
	benchmarkH(b, func(p LumpedProblem) {
		Analyze(p, t0, []Target{{Name: "handle", Celsius: 50}}, AnalyzeOptions{})
	})
}

// Binning the readings for the iterations (binned) must not move the fit: on the
// noisy 2,000-reading steel bar and on a plain exponential (our own curves, 0.1 K
// noise and steps), with the ambient fitted and measured, the binned fit's parameters
// lie within a fifth of a standard error of the fit to every reading (the bins' bias
// on the bar's early bend: 0.004 K on a 601.5 °C start whose standard error, from
// 2,000 readings, is 0.04 K), and its
// statistics (on every reading) agree to 1e-3 and its standard errors to 1e-2
// relative.
func TestFitHBinnedMatchesFull(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	exp := synth(rng, 2000, 3600, 22, 180, 900, 0.1, 0.1)
	hot := hotBar()
	for _, c := range []struct {
		name     string
		p        LumpedProblem
		measured bool
	}{{"steel bar", hot, false}, {"steel bar, measured ambient", hot, true}, {"exponential", exp, false}, {"exponential, measured ambient", exp, true}} {
		t.Run(c.name, func(t *testing.T) {
			hp := HProblem{Times: c.p.Times, Celsius: c.p.Celsius, Law: DefaultSurfaceLaw, AmbientPrior: roomPrior, AmbientPriorSD: roomPriorSD}
			lp := c.p
			if c.measured {
				hp.Ambient = constant(len(c.p.Times), 22)
				lp.Ambient = hp.Ambient
			}
			lr, err := FitLumped(lp, nil)
			if err != nil {
				t.Fatal(err)
			}
			all, err1 := fitHBinned(hp, &lr, len(c.p.Times))
			bin, err2 := fitHBinned(hp, &lr, maxFitPoints)
			if err1 != nil || err2 != nil {
				t.Fatal(err1, err2)
			}
			for _, q := range []struct {
				name           string
				full, bin, err float64
			}{
				{"initial", all.Initial, bin.Initial, all.InitialErr},
				{"capacity", all.Capacity, bin.Capacity, all.CapacityErr},
				{"ambient", all.Ambient, bin.Ambient, all.AmbientErr},
			} {
				if q.err == 0 && q.full == q.bin {
					continue // a measured ambient
				}
				if math.Abs(q.bin-q.full) > q.err/5 {
					t.Errorf("%s %.6g binned, %.6g from every reading (standard error %.3g)", q.name, q.bin, q.full, q.err)
				}
			}
			for _, e := range [][2]float64{{bin.InitialErr, all.InitialErr}, {bin.CapacityErr, all.CapacityErr}, {bin.AmbientErr, all.AmbientErr}} {
				if math.Abs(e[0]-e[1]) > 1e-2*e[1] {
					t.Errorf("standard error %.5g binned, %.5g from every reading", e[0], e[1])
				}
			}
			if math.Abs(bin.RMSE/all.RMSE-1) > 1e-3 || math.Abs(bin.Rho-all.Rho) > 1e-3 || bin.N != all.N {
				t.Errorf("rmse %.6g, rho %.4f, n %d binned; %.6g, %.4f, %d from every reading", bin.RMSE, bin.Rho, bin.N, all.RMSE, all.Rho, all.N)
			}
		})
	}
}

// A lazily built Φ table (nodes computed outward from the first one asked for) must
// give the differences of Φ a table computed from its low end gives, to rounding:
// only differences enter the model. And an early-stopped residual sum must stop only
// above its limit.
func TestPhiTableLazyMatchesComplete(t *testing.T) {
	lazy := newPhiTable(DefaultSurfaceLaw, 20, 1, 900, false)
	full := newPhiTable(DefaultSurfaceLaw, 20, 1, 900, false)
	full.complete()
	// Ask the lazy table in the middle first, then below and above it.
	for _, pair := range [][2]float64{{4, 5}, {1, 4.5}, {-5, 6.5}, {-8, 7.9}} {
		a, b := pair[0], pair[1]
		got, want := lazy.at(b)-lazy.at(a), full.at(b)-full.at(a)
		if math.Abs(got-want) > 1e-12*math.Abs(want) {
			t.Errorf("Φ(%g) − Φ(%g): lazy %.15g, complete %.15g", b, a, got, want)
		}
	}
	m := &hModel{ts: []float64{0, 10, 20, 30}, y: []float64{500, 480, 470, 300}, law: DefaultSurfaceLaw, side: 1}
	r := make([]float64, 4)
	all := m.residuals(full, math.Log(480), 1e-5, r, nil, math.Inf(1))
	for _, limit := range []float64{0, all / 2, all, 2 * all} {
		got := m.residuals(full, math.Log(480), 1e-5, r, nil, limit)
		if limit < all && !(got > limit) || limit >= all && got != all {
			t.Errorf("limit %g: sum %g (all %g)", limit, got, all)
		}
	}
}

// normalInverse's written-out Cholesky inverse must agree with gonum's (mat.Cholesky,
// the reference here, applied to the same unit-diagonal scaling) on random positive
// definite matrices whose diagonals span sixteen orders of magnitude, as a fit's
// parameters do, and must refuse matrices that are not positive definite.
func TestNormalInverseMatchesGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	for trial := range 300 {
		k := 1 + trial%4
		j := mat.NewDense(k+4, k, nil)
		for r := range k + 4 {
			for c := range k {
				j.Set(r, c, rng.NormFloat64()*math.Pow(10, float64(4*c-4)))
			}
		}
		var n mat.SymDense
		n.SymOuterK(1, j.T())
		got, ok := normalInverse(&n, 0.3)
		if !ok {
			t.Fatalf("trial %d: refused a positive definite %d×%d matrix", trial, k, k)
		}
		d := make([]float64, k)
		a := mat.NewSymDense(k, nil)
		for r := range k {
			d[r] = math.Sqrt(n.At(r, r))
		}
		for r := range k {
			for c := r; c < k; c++ {
				a.SetSym(r, c, n.At(r, c)/(d[r]*d[c]))
			}
		}
		var ch mat.Cholesky
		var inv mat.SymDense
		if !ch.Factorize(a) {
			t.Fatalf("trial %d: gonum refused the matrix", trial)
		}
		_ = ch.InverseTo(&inv) // a Condition error still gives the inverse
		for r := range k {
			for c := range k {
				want := 0.09 * inv.At(r, c) / (d[r] * d[c])
				scale := 0.09 * math.Sqrt(inv.At(r, r)*inv.At(c, c)) / (d[r] * d[c])
				if math.Abs(got.At(r, c)-want) > 1e-9*scale {
					t.Fatalf("trial %d: inverse[%d][%d] = %g, gonum %g", trial, r, c, got.At(r, c), want)
				}
			}
		}
	}
	for _, c := range []struct {
		name string
		n    []float64
	}{
		{"rank one", []float64{1, 2, 2, 4}},
		{"indefinite", []float64{1, 3, 3, 1}},
		{"zero diagonal", []float64{0, 0, 0, 1}},
		{"NaN", []float64{math.NaN(), 0, 0, 1}},
	} {
		if _, ok := normalInverse(mat.NewSymDense(2, c.n), 1); ok {
			t.Errorf("%s: normalInverse accepted %v", c.name, c.n)
		}
	}
}

// fitHRace must return exactly the fit that fitting every law to convergence and
// keeping the lowest objective (sum of squares and the room prior's term) returns
// (the dropped laws would not have won), on the
// independent benchmark's curves (testdata/bench, every case at 25, 50 and 100 % of
// the time to its crossing) with the unknown specimen's still- and moving-air laws,
// and on the steel bar with its ambient fitted and measured; and it must drop some.
func TestFitHRaceMatchesAll(t *testing.T) {
	var problems []LumpedProblem
	for _, c := range benchIndex(t).Cases {
		curve := readBenchCase(t, c)
		for _, frac := range []float64{0.25, 0.5, 1} {
			part := curve.Until(c.PlacedS + frac*(c.CrossingS-c.PlacedS))
			var p LumpedProblem
			for i, tt := range part.Times {
				if tt >= c.PlacedS && !math.IsNaN(part.Celsius[i]) {
					p.Times, p.Celsius = append(p.Times, tt-c.PlacedS), append(p.Celsius, part.Celsius[i])
				}
			}
			problems = append(problems, p)
		}
	}
	bar := hotBar()
	measured := hotBar()
	measured.Ambient = measuredAmbient(measured, 17)
	problems = append(problems, bar, measured)
	var races, dropped int
	for i, p := range problems {
		if len(p.Times) < minPointsH {
			continue
		}
		lr, err := FitLumped(p, nil)
		start := &lr
		if err != nil {
			start = roughStart(p)
		}
		if start == nil {
			continue
		}
		still, moving := hCandidates(nil)
		for _, laws := range [][]SurfaceLaw{still, moving} {
			var hps []HProblem
			var want *HResult
			for _, law := range laws {
				hp := HProblem{Times: p.Times, Celsius: p.Celsius, Ambient: p.Ambient, Law: law}
				if p.Ambient == nil {
					hp.AmbientPrior, hp.AmbientPriorSD = roomPrior, roomPriorSD
				}
				hps = append(hps, hp)
				if r, err := fitH(hp, start); err == nil && (want == nil || r.objective < want.objective) {
					want = &r
				}
			}
			got, d := fitHRace(hps, start, nil)
			races, dropped = races+1, dropped+d
			switch {
			case (got == nil) != (want == nil):
				t.Fatalf("problem %d: race %v, all laws %v", i, got, want)
			case got != nil && (got.Law != want.Law || got.RMSE != want.RMSE || got.Ambient != want.Ambient):
				t.Errorf("problem %d: race kept %+v (rms %.6g), all laws %+v (rms %.6g)", i, got.Law, got.RMSE, want.Law, want.RMSE)
			}
		}
	}
	t.Logf("%d races of 3 laws, %d laws dropped", races, dropped)
	if dropped == 0 {
		t.Error("no law was dropped: the race saves nothing")
	}
}
