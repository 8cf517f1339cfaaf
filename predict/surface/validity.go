package surface

import (
	"errors"
	"fmt"
	"math"
)

// ErrOutOfRange is matched (errors.Is) by every error Validity and Check return.
var ErrOutOfRange = errors.New("surface: outside the correlation's validity range")

// RangeError says which quantity lies outside which range for which geometry.
type RangeError struct {
	// Geometry is the correlation's geometry.
	Geometry Geometry
	// Quantity is "Ra", "Pr" or "film temperature (K)".
	Quantity string
	// Value is the offending value.
	Value float64
	// Min and Max bound the valid range (-Inf / +Inf where unbounded).
	Min, Max float64
	// Source names where the range comes from.
	Source string
}

// Error describes the violation, e.g.
// "surface: sphere: Ra = 2e+11 outside [0, 1e+11] (Churchill 1983, Incropera Eq. 9.35)".
func (e *RangeError) Error() string {
	return fmt.Sprintf("surface: %v: %s = %.4g outside [%.4g, %.4g] (%s)",
		e.Geometry, e.Quantity, e.Value, e.Min, e.Max, e.Source)
}

// Is makes errors.Is(err, ErrOutOfRange) true.
func (e *RangeError) Is(target error) bool { return target == ErrOutOfRange }

// corrRange is the validity range of one correlation.
type corrRange struct {
	raMin, raMax float64
	prMin        float64
	source       string
}

// sphereMinPr is the lowest Pr accepted for the sphere. Incropera Eq. 9.35 states
// Pr ≥ 0.7 (shared/reference section 3.2, NC4, PARTIAL); air in the table has
// Pr = 0.683–0.737, dipping below 0.7 for film temperatures of about 375–730 K. Our
// judgement (not from the source): accept air down to 0.68, where the correlation's Pr
// factor [1 + (0.469/Pr)^(9/16)]^(−4/9) differs from its value at 0.7 by under 0.4 %
// (TestSpherePrFactorNear07 computes it).
const sphereMinPr = 0.68

// ranges holds each geometry's validity range. Ra = 0 (no temperature difference) is
// always accepted: there is no flow and no flux.
var ranges = [...]corrRange{
	// shared/reference section 3.2 NC1: "entire range of Ra_L", all Pr.
	VerticalPlate: {0, math.Inf(1), 0, "Churchill & Chu 1975, Incropera Eq. 9.26: all Ra"},
	// shared/reference section 3.2 NC3 (VERIFIED against CalebBell/ht).
	HorizontalCylinder: {1e-5, 1e12, 0, "Churchill & Chu 1975, Incropera Eq. 9.34: 1e-5 <= Ra <= 1e12"},
	// shared/reference section 3.2 NC4 (PARTIAL); Pr bound see sphereMinPr.
	Sphere: {0, 1e11, sphereMinPr, "Churchill 1983, Incropera Eq. 9.35: Ra <= 1e11, Pr >= 0.7 (air to 0.68 accepted)"},
}

// Validity reports whether Ra and Pr lie inside the range of the geometry's correlation
// (see Nusselt). It returns nil when they do, a *RangeError (matching ErrOutOfRange) when
// not, and a plain error for an unknown geometry. Ra = 0 is always valid.
func Validity(g Geometry, Ra, Pr float64) error {
	if !g.valid() {
		return fmt.Errorf("surface: validity of unknown geometry %v", g)
	}
	r := &ranges[g]
	if Ra != 0 && !(Ra >= r.raMin && Ra <= r.raMax) {
		return &RangeError{Geometry: g, Quantity: "Ra", Value: Ra, Min: r.raMin, Max: r.raMax, Source: r.source}
	}
	if !(Pr > 0 && Pr >= r.prMin) {
		return &RangeError{Geometry: g, Quantity: "Pr", Value: Pr, Min: r.prMin, Max: math.Inf(1), Source: r.source}
	}
	return nil
}

// Check is Validity from temperatures: it computes Ra and Pr as Rayleigh does and also
// reports a film temperature outside the air table [MinFilmK, MaxFilmK], where Air
// clamps. It returns nil when everything is in range, else the violations joined.
func Check(g Geometry, lengthM, surfaceC, ambientC float64) error {
	if !(lengthM > 0) {
		return fmt.Errorf("surface: %v: characteristic length %g m is not positive", g, lengthM)
	}
	var errs []error
	filmK := filmKelvin(surfaceC, ambientC)
	if !(filmK >= MinFilmK && filmK <= MaxFilmK) {
		errs = append(errs, &RangeError{Geometry: g, Quantity: "film temperature (K)", Value: filmK,
			Min: MinFilmK, Max: MaxFilmK, Source: "air table, Incropera Table A.4"})
	}
	Ra, Pr := Rayleigh(g, lengthM, surfaceC, ambientC)
	if err := Validity(g, Ra, Pr); err != nil {
		errs = append(errs, err)
	}
	return errors.Join(errs...)
}
