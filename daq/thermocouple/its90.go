package thermocouple

import (
	"fmt"
	"math"
)

// forwardRange is one piece of a reference function E(t) = Σ c_i·t^i (+ exponential term)
// valid for lo ≤ t ≤ hi (°C, mV).
type forwardRange struct {
	lo, hi float64
	c      []float64
	exp    *expTerm
}

// expTerm is the extra term a0·exp(a1·(t − a2)²) of type K above 0 °C.
type expTerm struct {
	a0, a1, a2 float64
}

// inverseRange is one of NIST's inverse polynomials t = Σ d_i·E^i, stated for
// eLo ≤ E ≤ eHi (mV), i.e. tLo ≤ t ≤ tHi (°C).
type inverseRange struct {
	tLo, tHi, eLo, eHi float64
	d                  []float64
}

// spec is everything known about one type, built once from the generated tables.
type spec struct {
	typ Type
	fwd []forwardRange
	inv []inverseRange
	// tLo and tHi bound the reference function.
	tLo, tHi float64
	// tInvLo is the lowest temperature that is inverted: tLo, or the start of NIST's
	// first inverse range where the reference function is not monotonic below it.
	tInvLo float64
	// eLo and eHi bound Temperature: NIST's printed inverse limits joined with the
	// reference function's values at tInvLo and tHi.
	eLo, eHi float64
	// exLo and exHi bound TemperatureExact: E(tInvLo) and E(tHi).
	exLo, exHi float64
}

// specs is indexed by the type letter; nil for letters that are not types.
var specs [256]*spec

func init() {
	for t, fwd := range forwardTable {
		specs[t] = newSpec(t, fwd, inverseTable[t])
	}
}

func newSpec(t Type, fwd []forwardRange, inv []inverseRange) *spec {
	sp := &spec{typ: t, fwd: fwd, tLo: fwd[0].lo, tHi: fwd[len(fwd)-1].hi}
	for _, r := range inv {
		r.d = trimZeros(r.d)
		sp.inv = append(sp.inv, r)
	}
	sp.tInvLo = sp.tLo
	if !sp.increasing(sp.tLo, inv[0].tLo) {
		sp.tInvLo = inv[0].tLo
	}
	sp.exLo, _ = sp.emf(sp.tInvLo)
	sp.exHi, _ = sp.emf(sp.tHi)
	sp.eLo = math.Min(sp.exLo, inv[0].eLo)
	sp.eHi = math.Max(sp.exHi, inv[len(inv)-1].eHi)
	return sp
}

// trimZeros drops trailing zero coefficients, which NIST prints to pad its tables.
func trimZeros(d []float64) []float64 {
	n := len(d)
	for n > 1 && d[n-1] == 0 {
		n--
	}
	return d[:n:n]
}

// increasing reports whether dE/dt > 0 everywhere on [a, b], checked every 0.01 °C.
func (sp *spec) increasing(a, b float64) bool {
	for t := a; t <= b; t += 0.01 {
		if _, d := sp.emf(t); d <= 0 {
			return false
		}
	}
	return true
}

// emf evaluates E(t) and dE/dt for t inside [tLo, tHi]; a boundary belongs to the
// lower range.
func (sp *spec) emf(t float64) (e, slope float64) {
	r := &sp.fwd[len(sp.fwd)-1]
	for i := range sp.fwd {
		if t <= sp.fwd[i].hi {
			r = &sp.fwd[i]
			break
		}
	}
	e, slope = horner(r.c, t)
	if x := r.exp; x != nil {
		u := t - x.a2
		g := x.a0 * math.Exp(x.a1*u*u)
		e += g
		slope += g * 2 * x.a1 * u
	}
	return e, slope
}

// horner evaluates p(x) = Σ c_i·x^i and p'(x) by Horner's method.
func horner(c []float64, x float64) (p, dp float64) {
	for i := len(c) - 1; i >= 0; i-- {
		dp = dp*x + p
		p = p*x + c[i]
	}
	return p, dp
}

// poly evaluates Σ c_i·x^i by Horner's method.
func poly(c []float64, x float64) float64 {
	p := 0.0
	for i := len(c) - 1; i >= 0; i-- {
		p = p*x + c[i]
	}
	return p
}

// EMF returns the thermoelectric voltage in mV of a type t thermocouple whose measuring
// junction is at celsius and whose reference junction is at 0 °C (the ITS-90 reference
// function). A temperature outside the function's range returns a *RangeError.
func EMF(t Type, celsius float64) (mV float64, err error) {
	sp := specs[t]
	if sp == nil {
		return 0, unknownType(t)
	}
	if !(celsius >= sp.tLo && celsius <= sp.tHi) {
		return 0, &RangeError{Type: t, Quantity: "temperature", Value: celsius, Lo: sp.tLo, Hi: sp.tHi}
	}
	e, _ := sp.emf(celsius)
	return e, nil
}

// Temperature returns the temperature in °C of the measuring junction of a type t
// thermocouple that gives mV with its reference junction at 0 °C. It evaluates NIST's
// inverse polynomial for the range holding mV (where two ranges overlap, types R and S
// from 1064 °C to 1200 °C, the higher one, which has the smaller error band); where
// there is none it solves the reference function to within 1e-6 °C (see the package
// documentation). An EMF more than EdgeSlack outside Type.EMFRange returns a
// *RangeError.
func Temperature(t Type, mV float64) (celsius float64, err error) {
	sp := specs[t]
	if sp == nil {
		return 0, unknownType(t)
	}
	if !(mV >= sp.eLo-EdgeSlack && mV <= sp.eHi+EdgeSlack) {
		return 0, sp.emfRangeError(mV, sp.eLo, sp.eHi)
	}
	if r := sp.inverseFor(mV); r != nil {
		return poly(r.d, mV), nil
	}
	return sp.solve(mV), nil
}

// TemperatureExact returns the temperature in °C at which the reference function of
// type t equals mV, found by safeguarded Newton iteration to within 1e-6 °C. Its range
// is E(lowest invertible temperature) to E(upper limit), each widened by EdgeSlack
// (and then giving the end temperature); outside it, a *RangeError.
func TemperatureExact(t Type, mV float64) (celsius float64, err error) {
	sp := specs[t]
	if sp == nil {
		return 0, unknownType(t)
	}
	if !(mV >= sp.exLo-EdgeSlack && mV <= sp.exHi+EdgeSlack) {
		return 0, sp.emfRangeError(mV, sp.exLo, sp.exHi)
	}
	return sp.solve(mV), nil
}

// Compensated returns the measuring-junction temperature in °C of a type t
// thermocouple that reads measuredMV while its reference (cold) junction is at
// coldJunctionC: Temperature(t, measuredMV + EMF(t, coldJunctionC)).
func Compensated(t Type, measuredMV, coldJunctionC float64) (float64, error) {
	cj, err := EMF(t, coldJunctionC)
	if err != nil {
		return 0, fmt.Errorf("cold junction: %w", err)
	}
	c, err := Temperature(t, measuredMV+cj)
	if err != nil {
		return 0, fmt.Errorf("measured %g mV + cold junction %.4f mV: %w", measuredMV, cj, err)
	}
	return c, nil
}

func (sp *spec) emfRangeError(mV, lo, hi float64) error {
	e := &RangeError{Type: sp.typ, Quantity: "EMF", Value: mV, Lo: lo, Hi: hi}
	if sp.tInvLo > sp.tLo && mV < lo {
		e.Note = fmt.Sprintf("no inverse below %g °C: the reference function is not monotonic there", sp.tInvLo)
	}
	return e
}

// inverseFor returns the last of NIST's inverse ranges that holds mV, or nil.
func (sp *spec) inverseFor(mV float64) *inverseRange {
	for i := len(sp.inv) - 1; i >= 0; i-- {
		if r := &sp.inv[i]; mV >= r.eLo && mV <= r.eHi {
			return r
		}
	}
	return nil
}

// EdgeSlack is how far, in mV, an EMF may lie beyond the ends of Type.EMFRange and
// still be converted, to the end temperature: half the last digit of NIST's 1 °C tables
// (0.001 mV), so that a table's own end values (type K −6.458 mV at −270 °C, while
// E(−270 °C) = −6.457738 mV) convert instead of failing.
const EdgeSlack = 0.0005

// solveTol is the step below which solve stops; the root is then known to well
// within 1e-6 °C, the documented tolerance.
const solveTol = 1e-9

// solve finds t in [tInvLo, tHi] with E(t) = mV by Newton's method kept inside a
// shrinking bracket (bisection when a step leaves it); an mV beyond E(tInvLo) or E(tHi)
// gives that end temperature.
func (sp *spec) solve(mV float64) float64 {
	switch {
	case mV <= sp.exLo:
		return sp.tInvLo
	case mV >= sp.exHi:
		return sp.tHi
	}
	a, b := sp.tInvLo, sp.tHi
	x := sp.guess(mV)
	for range 200 {
		f, df := sp.emf(x)
		f -= mV
		if f == 0 {
			return x
		}
		if f < 0 {
			a = x
		} else {
			b = x
		}
		next := x - f/df
		if !(df > 0 && next > a && next < b) {
			next = a + (b-a)/2
		}
		if math.Abs(next-x) < solveTol || b-a < solveTol {
			return next
		}
		x = next
	}
	return x
}

// guess starts solve from the nearest inverse polynomial, kept inside the range.
func (sp *spec) guess(mV float64) float64 {
	r := &sp.inv[0]
	if mV > r.eHi {
		r = &sp.inv[len(sp.inv)-1]
	}
	if r2 := sp.inverseFor(mV); r2 != nil {
		r = r2
	}
	return math.Min(math.Max(poly(r.d, mV), sp.tInvLo), sp.tHi)
}
