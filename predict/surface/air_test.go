package surface

import (
	"math"
	"testing"
)

// TestAirTableIdentities guards the rows typed from memory (see airTable) with the
// identities every row of a property table must satisfy: ν = μ/ρ, α = k/(ρ·cp),
// Pr = ν/α (definitions), and ρ·T constant at constant pressure (ideal gas; the 300 K
// row gives ρT = 348.4 kg·K/m³). Tolerances allow the table's 3–4 printed digits.
func TestAirTableIdentities(t *testing.T) {
	const rhoT300 = 1.1614 * 300 // Incropera Table A.4, via shared/reference section 3.1
	for _, row := range airTable {
		p := row.p
		checks := []struct {
			name      string
			got, want float64
			tol       float64
		}{
			{"nu = mu/rho", p.Nu, p.Mu / p.Rho, 2e-3},
			{"alpha = k/(rho cp)", p.Alpha, p.K / (p.Rho * p.Cp), 6e-3},
			{"Pr = nu/alpha", p.Pr, p.Nu / p.Alpha, 6e-3},
			{"Pr = mu cp/k", p.Pr, p.Mu * p.Cp / p.K, 3e-3},
			{"rho T = const", p.Rho * row.t, rhoT300, 3e-3},
		}
		for _, c := range checks {
			if e := relErr(c.got, c.want); e > c.tol {
				t.Errorf("%g K: %s: %g vs %g (rel %.2g > %g)", row.t, c.name, c.got, c.want, e, c.tol)
			}
		}
	}
}

// TestAirViscositySutherland compares the table's μ with Sutherland's law
// μ = 1.716e-5·(T/273.15)^1.5·(273.15 + 110.4)/(T + 110.4) (constants as in White,
// "Viscous Fluid Flow"; from memory), an independent correlation: within 3 % from
// 200 to 1200 K (the law is known to drift by a couple of percent at the hot end).
func TestAirViscositySutherland(t *testing.T) {
	for tK := MinFilmK; tK <= MaxFilmK; tK += 25 {
		want := 1.716e-5 * math.Pow(tK/273.15, 1.5) * (273.15 + 110.4) / (tK + 110.4)
		if got := Air(tK).Mu; relErr(got, want) > 0.03 {
			t.Errorf("Air(%g).Mu = %.4g, Sutherland %.4g (rel %.2g > 3%%)", tK, got, want, relErr(got, want))
		}
	}
}

// TestAirInterpolation: halfway between rows Air returns the mean of the rows; values
// between rows lie between them; outside the table Air clamps; NaN propagates.
func TestAirInterpolation(t *testing.T) {
	for i := 1; i < len(airTable); i++ {
		lo, hi := airTable[i-1], airTable[i]
		mid := Air((lo.t + hi.t) / 2)
		if want := (lo.p.K + hi.p.K) / 2; relErr(mid.K, want) > 1e-12 {
			t.Errorf("Air(%g).K = %g, want mean of rows %g", (lo.t+hi.t)/2, mid.K, want)
		}
		if want := (lo.p.Nu + hi.p.Nu) / 2; relErr(mid.Nu, want) > 1e-12 {
			t.Errorf("Air(%g).Nu = %g, want mean of rows %g", (lo.t+hi.t)/2, mid.Nu, want)
		}
		q := Air(lo.t + 0.3*(hi.t-lo.t))
		if !(q.Alpha > lo.p.Alpha && q.Alpha < hi.p.Alpha) {
			t.Errorf("Air between %g and %g K: alpha %g not between rows", lo.t, hi.t, q.Alpha)
		}
	}
	if got, want := Air(150), airTable[0].p; got != want {
		t.Errorf("Air(150) = %+v, want clamped to the 200 K row %+v", got, want)
	}
	if got, want := Air(2000), airTable[len(airTable)-1].p; got != want {
		t.Errorf("Air(2000) = %+v, want clamped to the 1200 K row %+v", got, want)
	}
	if got := Air(math.NaN()); !math.IsNaN(got.K) || !math.IsNaN(got.Pr) {
		t.Errorf("Air(NaN) = %+v, want NaN properties", got)
	}
}

// TestAirRowsOrdered: rows strictly increase in temperature (airAt's search relies on it).
func TestAirRowsOrdered(t *testing.T) {
	for i := 1; i < len(airTable); i++ {
		if !(airTable[i].t > airTable[i-1].t) {
			t.Errorf("row %d (%g K) not above row %d (%g K)", i, airTable[i].t, i-1, airTable[i-1].t)
		}
	}
	if airTable[0].t != MinFilmK || airTable[len(airTable)-1].t != MaxFilmK {
		t.Errorf("table spans %g–%g K, constants say %g–%g K",
			airTable[0].t, airTable[len(airTable)-1].t, MinFilmK, MaxFilmK)
	}
}

// airAt starts its row search from an estimate; it must pick the same rows as a scan
// from the first row, at every row's temperature and between them.
func TestAirAtRowSearch(t *testing.T) {
	var temps []float64
	for _, row := range airTable {
		temps = append(temps, row.t, row.t-1e-9, row.t+1e-9)
	}
	for tK := 150.0; tK < 1300; tK += 0.37 {
		temps = append(temps, tK)
	}
	for _, tK := range temps {
		got, gotF := airAt(tK)
		want, wantF := scanAir(tK)
		if got != want || gotF != wantF {
			t.Fatalf("airAt(%.12g) = %+v %v, scan %+v %v", tK, got, gotF, want, wantF)
		}
	}
}

// scanAir is airAt's interpolation with the rows found by a scan from the first.
func scanAir(filmK float64) (AirProps, [3]float64) {
	last := len(airTable) - 1
	switch {
	case filmK <= airTable[0].t:
		return airTable[0].p, prFactors[0]
	case filmK >= airTable[last].t:
		return airTable[last].p, prFactors[last]
	}
	i := 1
	for airTable[i].t < filmK {
		i++
	}
	if filmK == airTable[i].t {
		return airTable[i].p, prFactors[i]
	}
	lo, hi := airTable[i-1], airTable[i]
	f := (filmK - lo.t) / (hi.t - lo.t)
	p := AirProps{K: lerp(lo.p.K, hi.p.K, f), Nu: lerp(lo.p.Nu, hi.p.Nu, f), Alpha: lerp(lo.p.Alpha, hi.p.Alpha, f),
		Pr: lerp(lo.p.Pr, hi.p.Pr, f), Rho: lerp(lo.p.Rho, hi.p.Rho, f), Cp: lerp(lo.p.Cp, hi.p.Cp, f), Mu: lerp(lo.p.Mu, hi.p.Mu, f)}
	var fac [3]float64
	for g := range fac {
		fac[g] = lerp(prFactors[i-1][g], prFactors[i][g], f)
	}
	return p, fac
}
