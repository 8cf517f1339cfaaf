package thermocouple

import (
	"fmt"
	"strings"
)

// Type is a thermocouple type letter as defined by IEC 60584-1. The zero Type is not
// a valid type.
type Type byte

// The thermocouple types with ITS-90 reference functions.
const (
	// B is platinum-30 % rhodium / platinum-6 % rhodium.
	B Type = 'B'
	// E is nickel-chromium / copper-nickel.
	E Type = 'E'
	// J is iron / copper-nickel.
	J Type = 'J'
	// K is nickel-chromium / nickel-aluminium.
	K Type = 'K'
	// N is nickel-chromium-silicon / nickel-silicon.
	N Type = 'N'
	// R is platinum-13 % rhodium / platinum.
	R Type = 'R'
	// S is platinum-10 % rhodium / platinum.
	S Type = 'S'
	// T is copper / copper-nickel.
	T Type = 'T'
)

// Types returns every supported type, in alphabetical order.
func Types() []Type { return []Type{B, E, J, K, N, R, S, T} }

// String returns the type letter, or "Type(n)" for a value that is not a type.
func (t Type) String() string {
	if t.valid() {
		return string(rune(t))
	}
	return fmt.Sprintf("Type(%d)", byte(t))
}

func (t Type) valid() bool { return specs[t] != nil }

// ParseType reads a type letter, ignoring case and surrounding space ("K", " k ").
// Anything else returns an error wrapping ErrUnknownType.
func ParseType(s string) (Type, error) {
	v := strings.TrimSpace(s)
	if len(v) == 1 {
		if t := Type(strings.ToUpper(v)[0]); t.valid() {
			return t, nil
		}
	}
	return 0, fmt.Errorf("%w %q (want one of B, E, J, K, N, R, S, T)", ErrUnknownType, s)
}

// TemperatureRange returns the range in °C over which EMF is defined for type t.
func (t Type) TemperatureRange() (lo, hi float64) {
	if sp := specs[t]; sp != nil {
		return sp.tLo, sp.tHi
	}
	return 0, 0
}

// EMFRange returns the range in mV over which Temperature is defined for type t: from
// the reference function's value at the lowest invertible temperature (or NIST's
// printed lower inverse limit, if lower) to its value at the upper limit (or NIST's
// printed upper inverse limit, if higher). Temperature accepts EdgeSlack more at
// either end.
func (t Type) EMFRange() (lo, hi float64) {
	if sp := specs[t]; sp != nil {
		return sp.eLo, sp.eHi
	}
	return 0, 0
}
