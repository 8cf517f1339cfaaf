// Package thermocouple converts between thermocouple EMF and temperature with the
// ITS-90 reference functions for types B, E, J, K, N, R, S and T (NIST Monograph 175,
// NIST SRD 60; the same functions as IEC 60584-1), reference junction at 0 °C.
//
// EMF evaluates the reference function E(t) (with the extra exponential term of type K
// above 0 °C). Temperature evaluates NIST's inverse polynomials t(E), whose deviation
// from the exact inverse stays within NIST's stated error bands (at most 0.06 °C, type K
// above 500 °C). Where NIST gives no inverse polynomial but the reference function is
// defined and monotonic (types E, K, N and T from −270 °C to −200 °C, and the
// fraction of a microvolt between NIST's printed upper inverse limits, given to
// 0.001 mV, and the reference function's value at the upper limit, e.g. type S from
// 18.693 mV to E(1768.1 °C) = 18.69354 mV), Temperature solves E(t) = E by safeguarded
// Newton iteration on the reference function instead, to within 1e-6 °C.
// TemperatureExact always does the latter. An EMF up to EdgeSlack (0.0005 mV, half the
// last digit of NIST's tables) beyond either end converts to the end temperature, so
// that a table's own end values convert.
//
// Type B has no inverse below 250 °C: NIST gives none, and its reference function is
// not monotonic below about 42 °C (E = 0 at 0 °C and again near 42 °C), so a type B
// EMF below 0.291 mV is reported as out of range rather than guessed.
//
// Compensated adds the cold-junction EMF before inverting: t = E⁻¹(E_measured + E(t_cj)).
//
// Every conversion outside a function's range returns an error that wraps
// ErrOutOfRange and is a *RangeError naming the type, the value and the valid range.
//
// The coefficient tables in coeffs_gen.go are generated from
// shared/reference/reference-values.md by internal/its90gen; the tests compare them
// with that file digit for digit.
package thermocouple

//go:generate go run ./internal/its90gen -ref ../../../shared/reference/reference-values.md -out coeffs_gen.go -testdata ../../testdata/thermocouple
