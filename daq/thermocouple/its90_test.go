package thermocouple

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// tableRounding is half the last digit of NIST's 1 °C tables (0.001 mV): every table
// entry is the reference function rounded to it (reference file section 1.1).
const tableRounding = 0.0005

// bandMargin is added to NIST's stated inverse error bands, which are rounded to their
// printed digits; the reference file (section 1.4) finds extremes up to 0.0032 °C past
// them and suggests this margin.
const bandMargin = 0.005

// exactTol is the documented tolerance of the Newton solution of E(t) = E, in °C.
const exactTol = 1e-6

// bands returns, by type and 0-based inverse range, max(|stated_err_lo|, |stated_err_hi|)
// from NIST's stated error bands (reference file section 1.4, S1 and S2).
func bands(t *testing.T) map[Type][]float64 {
	t.Helper()
	out := map[Type][]float64{}
	for _, r := range loadRows(t, "inverse-error-bands.csv") {
		ty := r.typ(t)
		if int(r.num(t, "range_idx")) != len(out[ty])+1 {
			t.Fatalf("inverse-error-bands.csv: ranges of type %v out of order", ty)
		}
		b := math.Max(math.Abs(r.num(t, "stated_err_lo_C")), math.Abs(r.num(t, "stated_err_hi_C")))
		out[ty] = append(out[ty], b)
	}
	return out
}

// inverseTolerance is how far Temperature may be from the exact inverse at mV: NIST's
// stated band (+ margin) of the inverse polynomial used, or exactTol where Temperature
// solves the reference function itself.
func inverseTolerance(bands map[Type][]float64, ty Type, mV float64) float64 {
	sp := specs[ty]
	r := sp.inverseFor(mV)
	if r == nil {
		return exactTol
	}
	for i := range sp.inv {
		if &sp.inv[i] == r {
			return bands[ty][i] + bandMargin
		}
	}
	panic("inverse range not in spec")
}

// slope returns dE/dt in mV/°C from the reference function, used to turn an EMF
// rounding into a temperature tolerance.
func slope(ty Type, c float64) float64 {
	_, d := specs[ty].emf(c)
	return d
}

// TestTableCheckValues checks every value of the NIST 1 °C tables quoted in the
// reference file section 1.5 (S1 all.tab, identical in S2), in both directions.
func TestTableCheckValues(t *testing.T) {
	bs := bands(t)
	seen := map[Type]int{}
	for _, r := range loadRows(t, "table-check-values.csv") {
		ty, c := r.typ(t), r.num(t, "t90_C")
		table, fn := r.num(t, "E_table_mV"), r.num(t, "E_function_mV_unrounded")
		seen[ty]++

		// Forward: the table is the function rounded to 0.001 mV; the unrounded value
		// is printed to 1e-6 mV (S10).
		got, err := EMF(ty, c)
		if err != nil {
			t.Errorf("EMF(%v, %g): %v", ty, c, err)
			continue
		}
		if d := math.Abs(got - table); d > tableRounding+1e-12 {
			t.Errorf("EMF(%v, %g) = %.6f mV, NIST table %.3f (off by %.6f)", ty, c, got, table, d)
		}
		if d := math.Abs(got - fn); d > 0.5e-6+1e-12 {
			t.Errorf("EMF(%v, %g) = %.7f mV, unrounded function %.6f", ty, c, got, fn)
		}

		// Inverse: types B below 250 °C has none (NIST gives none; section 1.6).
		if c < specs[ty].tInvLo {
			if _, err := Temperature(ty, table); !errors.Is(err, ErrOutOfRange) {
				t.Errorf("Temperature(%v, %g): error %v, want ErrOutOfRange", ty, table, err)
			}
			continue
		}
		s := slope(ty, c)
		for _, in := range []struct {
			mV, rounding float64
		}{{fn, 0.5e-6}, {table, tableRounding}} {
			tol := inverseTolerance(bs, ty, in.mV) + in.rounding/s
			if got, err := Temperature(ty, in.mV); err != nil || math.Abs(got-c) > tol {
				t.Errorf("Temperature(%v, %g) = %.4f, %v; want %g ± %.4f", ty, in.mV, got, err, c, tol)
			}
			tol = exactTol + in.rounding/s
			if got, err := TemperatureExact(ty, in.mV); err != nil || math.Abs(got-c) > tol {
				t.Errorf("TemperatureExact(%v, %g) = %.6f, %v; want %g ± %.6f", ty, in.mV, got, err, c, tol)
			}
		}
	}
	for _, ty := range Types() {
		if seen[ty] < 5 {
			t.Errorf("type %v: only %d check values read", ty, seen[ty])
		}
	}
}

// TestInverseCheckValues checks NIST's inverse polynomials, range by range, against the
// values computed independently in the reference file section 1.5 (S10; "expect
// agreement to 1e-4 degC"), which catches a wrong coefficient or a wrong range choice.
func TestInverseCheckValues(t *testing.T) {
	bs := bands(t)
	for _, r := range loadRows(t, "inverse-check-values.csv") {
		ty, mV := r.typ(t), r.num(t, "E_mV_input")
		want, truth := r.num(t, "t90_from_inverse_C"), r.num(t, "t90_true_C")
		got, err := Temperature(ty, mV)
		if err != nil || math.Abs(got-want) > 1e-4 {
			t.Errorf("Temperature(%v, %g) = %.5f, %v; want %.4f (inverse range %s)", ty, mV, got, err, want, r["range_idx"])
		}
		sp := specs[ty]
		if ri := sp.inverseFor(mV); ri != &sp.inv[int(r.num(t, "range_idx"))-1] {
			t.Errorf("type %v %g mV: wrong inverse range chosen, want %s", ty, mV, r["range_idx"])
		}
		if tol := inverseTolerance(bs, ty, mV); math.Abs(got-truth) > tol {
			t.Errorf("Temperature(%v, %g) = %.5f, true %g ± %.3f (section 1.4 band)", ty, mV, got, truth, tol)
		}
	}
}

// TestRoundTrip sweeps each type's whole invertible range every 0.05 °C plus random
// points: E must increase strictly, Temperature(EMF(t)) must stay within NIST's stated
// band of the polynomial used (section 1.4), and TemperatureExact must return t.
func TestRoundTrip(t *testing.T) {
	bs := bands(t)
	rng := rand.New(rand.NewPCG(1, 2))
	step := 0.05
	if testing.Short() {
		step = 0.5
	}
	for _, ty := range Types() {
		lo, hi := specs[ty].tInvLo, specs[ty].tHi
		prev := math.Inf(-1)
		var temps []float64
		for c := lo; c < hi; c += step {
			temps = append(temps, c)
		}
		temps = append(temps, hi)
		for range 2000 {
			temps = append(temps, lo+(hi-lo)*rng.Float64())
		}
		for i, c := range temps {
			e, err := EMF(ty, c)
			if err != nil {
				t.Fatalf("EMF(%v, %g): %v", ty, c, err)
			}
			if i < len(temps)-2000 && e <= prev {
				t.Errorf("type %v: E(%g) = %g not above E at the previous step %g", ty, c, e, prev)
			}
			prev = e
			if got, err := Temperature(ty, e); err != nil || math.Abs(got-c) > inverseTolerance(bs, ty, e) {
				t.Errorf("Temperature(%v, E(%g) = %g) = %g, %v", ty, c, e, got, err)
			}
			if got, err := TemperatureExact(ty, e); err != nil || math.Abs(got-c) > exactTol {
				t.Errorf("TemperatureExact(%v, E(%g) = %g) = %.9f, %v", ty, c, e, got, err)
			}
		}
	}
}

// TestInverseOfEMFRange checks the other direction at random EMFs: the forward function
// of TemperatureExact's answer gives the EMF back.
func TestInverseOfEMFRange(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, ty := range Types() {
		sp := specs[ty]
		for range 2000 {
			e := sp.exLo + (sp.exHi-sp.exLo)*rng.Float64()
			c, err := TemperatureExact(ty, e)
			if err != nil {
				t.Fatalf("TemperatureExact(%v, %g): %v", ty, e, err)
			}
			back, err := EMF(ty, c)
			if err != nil || math.Abs(back-e) > exactTol*slope(ty, c)+1e-12 {
				t.Errorf("EMF(%v, TemperatureExact(%g) = %g) = %g, %v", ty, e, c, back, err)
			}
		}
	}
}

// TestCompensated uses NIST 1 °C table values (section 1.5): a thermocouple whose hot
// junction is at hot and cold junction at cj reads E(hot) − E(cj).
func TestCompensated(t *testing.T) {
	tests := []struct {
		ty                 Type
		hot, eHot, cj, eCj float64 // °C and NIST table mV
	}{
		{K, 100, 4.096, 25, 1.000},
		{K, 1000, 41.276, 25, 1.000},
		{K, -100, -3.554, 25, 1.000},
		{J, 500, 27.393, 25, 1.277},
		{T, 200, 9.288, 25, 0.992},
		{E, 700, 53.112, 25, 1.495},
		{N, 1000, 36.256, 25, 0.659},
		{R, 1500, 17.451, 25, 0.141},
		{S, 1000, 9.587, 25, 0.143},
		{B, 1000, 4.834, 100, 0.033},
		{K, 25, 1.000, -50, -1.889},
	}
	bs := bands(t)
	for _, tc := range tests {
		got, err := Compensated(tc.ty, tc.eHot-tc.eCj, tc.cj)
		// Both table values carry 0.0005 mV of rounding.
		tol := inverseTolerance(bs, tc.ty, tc.eHot) + 2*tableRounding/slope(tc.ty, tc.hot)
		if err != nil || math.Abs(got-tc.hot) > tol {
			t.Errorf("Compensated(%v, %g, %g) = %.4f, %v; want %g ± %.3f", tc.ty, tc.eHot-tc.eCj, tc.cj, got, err, tc.hot, tol)
		}
	}
}

func TestCompensatedErrors(t *testing.T) {
	if _, err := Compensated(K, 1, -300); !errors.Is(err, ErrOutOfRange) || !strings.Contains(err.Error(), "cold junction") {
		t.Errorf("cold junction at -300 °C: error %v, want ErrOutOfRange naming the cold junction", err)
	}
	// 54 mV + E(25 °C) = 55 mV is past type K's 54.886 mV (section 1.5, K 1372 °C).
	_, err := Compensated(K, 54, 25)
	var re *RangeError
	if !errors.As(err, &re) || re.Quantity != "EMF" || math.Abs(re.Value-55.000242) > 1e-6 {
		t.Errorf("Compensated(K, 54, 25): error %v, want a RangeError for 55.000242 mV", err)
	}
}

// TestRangeErrors checks the limits of NIST's functions (reference file sections 1.2
// and 1.3) and that every error names type, value and range.
func TestRangeErrors(t *testing.T) {
	tests := []struct {
		name  string
		fn    func() (float64, error)
		parts []string // substrings of the message
	}{
		{"K above 1372 °C", func() (float64, error) { return EMF(K, 1372.0001) }, []string{"type K", "temperature 1372.0001 °C", "-270 to 1372 °C"}},
		{"K below -270 °C", func() (float64, error) { return EMF(K, -270.5) }, []string{"type K", "-270.5 °C", "-270 to 1372 °C"}},
		{"T above 400 °C", func() (float64, error) { return EMF(T, 400.5) }, []string{"type T", "-270 to 400 °C"}},
		{"R below -50 °C", func() (float64, error) { return EMF(R, -51) }, []string{"type R", "-50 to 1768.1 °C"}},
		{"J above 1200 °C", func() (float64, error) { return EMF(J, 1201) }, []string{"type J", "-210 to 1200 °C"}},
		{"NaN °C", func() (float64, error) { return EMF(K, math.NaN()) }, []string{"NaN"}},
		{"+Inf °C", func() (float64, error) { return EMF(S, math.Inf(1)) }, []string{"+Inf"}},
		{"K above 54.886 mV", func() (float64, error) { return Temperature(K, 54.9) }, []string{"type K", "EMF 54.9 mV", "-6.4577 to 54.8864 mV"}},
		{"K below -6.458 mV", func() (float64, error) { return Temperature(K, -6.5) }, []string{"type K", "-6.4577 to"}},
		{"B below 250 °C", func() (float64, error) { return Temperature(B, 0.2) }, []string{"type B", "0.2910 to 13.8203 mV", "no inverse below 250 °C"}},
		{"B negative", func() (float64, error) { return Temperature(B, -0.001) }, []string{"type B"}},
		{"NaN mV", func() (float64, error) { return Temperature(N, math.NaN()) }, []string{"type N", "NaN"}},
		// NIST prints type E's upper inverse limit as 76.373 mV, above E(1000 °C) =
		// 76.372826 mV (section 1.5); the exact inverse stops at the latter.
		{"E exact above E(1000 °C)", func() (float64, error) { return TemperatureExact(E, 76.3734) }, []string{"type E", "76.3728 mV"}},
		{"K just past the slack", func() (float64, error) { return Temperature(K, 54.886364+EdgeSlack+1e-6) }, []string{"type K"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := tc.fn()
			var re *RangeError
			if !errors.Is(err, ErrOutOfRange) || !errors.As(err, &re) {
				t.Fatalf("error %v, want a *RangeError wrapping ErrOutOfRange", err)
			}
			for _, p := range tc.parts {
				if !strings.Contains(err.Error(), p) {
					t.Errorf("error %q lacks %q", err, p)
				}
			}
		})
	}
}

// TestRangeNoteOnlyBelow: type B's note on its missing low inverse belongs to low EMFs.
func TestRangeNoteOnlyBelow(t *testing.T) {
	_, err := Temperature(B, 14)
	if !errors.Is(err, ErrOutOfRange) || strings.Contains(err.Error(), "no inverse") {
		t.Errorf("Temperature(B, 14): error %v, want ErrOutOfRange without the low-end note", err)
	}
}

// TestRangeLimitsInside checks that both ends of every range are accepted.
func TestRangeLimitsInside(t *testing.T) {
	for _, ty := range Types() {
		lo, hi := ty.TemperatureRange()
		for _, c := range []float64{lo, hi} {
			if _, err := EMF(ty, c); err != nil {
				t.Errorf("EMF(%v, %g): %v", ty, c, err)
			}
		}
		elo, ehi := ty.EMFRange()
		for _, e := range []float64{elo, ehi} {
			if c, err := Temperature(ty, e); err != nil || c < lo-0.1 || c > hi+0.1 {
				t.Errorf("Temperature(%v, %g) = %g, %v", ty, e, c, err)
			}
		}
	}
	// NIST's printed limits (section 1.3): E(1000 °C) for type E is 76.372826 mV but
	// NIST's inverse is stated to 76.373 mV; S's 18.693 mV is below E(1768.1 °C).
	if _, err := Temperature(E, 76.373); err != nil {
		t.Errorf("Temperature(E, 76.373): %v", err)
	}
	if c, err := Temperature(S, 18.6935); err != nil || math.Abs(c-1768.1) > 0.01 {
		t.Errorf("Temperature(S, 18.6935) = %g, %v; want about 1768.1", c, err)
	}
	// The NIST tables' end values (section 1.5) lie just outside the exact function
	// range and convert to the end temperature.
	for _, tc := range []struct {
		ty       Type
		mV, want float64
	}{{K, -6.458, -270}, {E, -9.835, -270}, {T, -6.258, -270}, {N, 47.513, 1300}, {K, 54.886, 1372}} {
		for name, fn := range map[string]func(Type, float64) (float64, error){"Temperature": Temperature, "TemperatureExact": TemperatureExact} {
			if c, err := fn(tc.ty, tc.mV); err != nil || math.Abs(c-tc.want) > 0.05 {
				t.Errorf("%s(%v, %g) = %g, %v; want %g", name, tc.ty, tc.mV, c, err, tc.want)
			}
		}
	}
}

func TestUnknownType(t *testing.T) {
	for _, ty := range []Type{0, 'X', 'k', 'A'} {
		if _, err := EMF(ty, 0); !errors.Is(err, ErrUnknownType) {
			t.Errorf("EMF(%v): error %v, want ErrUnknownType", ty, err)
		}
		if _, err := Temperature(ty, 0); !errors.Is(err, ErrUnknownType) {
			t.Errorf("Temperature(%v): error %v, want ErrUnknownType", ty, err)
		}
		if _, err := TemperatureExact(ty, 0); !errors.Is(err, ErrUnknownType) {
			t.Errorf("TemperatureExact(%v): error %v, want ErrUnknownType", ty, err)
		}
		if _, err := Compensated(ty, 0, 0); !errors.Is(err, ErrUnknownType) {
			t.Errorf("Compensated(%v): error %v, want ErrUnknownType", ty, err)
		}
		if lo, hi := ty.TemperatureRange(); lo != 0 || hi != 0 {
			t.Errorf("%v.TemperatureRange() = %g, %g", ty, lo, hi)
		}
	}
}

func TestParseType(t *testing.T) {
	for _, s := range []string{"B", "E", "J", "K", "N", "R", "S", "T", "k", " t ", "\tb\n"} {
		ty, err := ParseType(s)
		if err != nil || ty.String() != strings.ToUpper(strings.TrimSpace(s)) {
			t.Errorf("ParseType(%q) = %v, %v", s, ty, err)
		}
	}
	for _, s := range []string{"", "X", "KK", "type K", "Ｋ", "0"} {
		if ty, err := ParseType(s); !errors.Is(err, ErrUnknownType) || !strings.Contains(err.Error(), "B, E, J, K, N, R, S, T") {
			t.Errorf("ParseType(%q) = %v, %v; want ErrUnknownType listing the types", s, ty, err)
		}
	}
	if got := Type(0).String(); got != "Type(0)" {
		t.Errorf("Type(0).String() = %q", got)
	}
}

// TestRanges checks the published range limits (reference file sections 1.2 and 1.3).
func TestRanges(t *testing.T) {
	want := map[Type][2]float64{
		B: {0, 1820}, E: {-270, 1000}, J: {-210, 1200}, K: {-270, 1372},
		N: {-270, 1300}, R: {-50, 1768.1}, S: {-50, 1768.1}, T: {-270, 400},
	}
	for ty, w := range want {
		if lo, hi := ty.TemperatureRange(); lo != w[0] || hi != w[1] {
			t.Errorf("%v.TemperatureRange() = %g, %g; want %g, %g", ty, lo, hi, w[0], w[1])
		}
	}
	// EMF ranges: the NIST table values at the ends (section 1.5), to the table's
	// rounding; type B starts at E(250 °C) = 0.291 mV, NIST's first inverse range.
	emf := map[Type][2]float64{
		B: {0.291, 13.820}, E: {-9.835, 76.373}, J: {-8.095, 69.553}, K: {-6.458, 54.886},
		N: {-4.345, 47.513}, R: {-0.226, 21.103}, S: {-0.236, 18.694}, T: {-6.258, 20.872},
	}
	for ty, w := range emf {
		if lo, hi := ty.EMFRange(); math.Abs(lo-w[0]) > tableRounding || math.Abs(hi-w[1]) > tableRounding {
			t.Errorf("%v.EMFRange() = %.6f, %.6f; want %g, %g", ty, lo, hi, w[0], w[1])
		}
	}
}

func TestHorner(t *testing.T) {
	// 1 + 2x + 3x² at x = 2: 17; derivative 2 + 6x: 14 (arithmetic).
	if p, dp := horner([]float64{1, 2, 3}, 2); p != 17 || dp != 14 {
		t.Errorf("horner = %g, %g; want 17, 14", p, dp)
	}
	if p := poly([]float64{1, 2, 3}, -1); p != 2 {
		t.Errorf("poly = %g; want 2", p)
	}
}
