package modbus

import (
	"fmt"
	"math"
)

// Type is how a value is held in one or two registers.
type Type string

// The register value types.
const (
	Int16   Type = "int16"
	Uint16  Type = "uint16"
	Int32   Type = "int32"
	Uint32  Type = "uint32"
	Float32 Type = "float32"
)

// Words returns how many registers a value of type t takes (1 or 2), or 0 for an
// unknown type.
func (t Type) Words() int {
	switch t {
	case Int16, Uint16:
		return 1
	case Int32, Uint32, Float32:
		return 2
	}
	return 0
}

// Value decodes a value of type t from regs (Words() registers). With lowFirst, the
// low 16 bits of a 32-bit value are in the first register ("word swapped"); otherwise
// the high word comes first, as Modbus sends bytes (big-endian). Bytes within a
// register are always big-endian.
func Value(regs []uint16, t Type, lowFirst bool) (float64, error) {
	if n := t.Words(); n == 0 || len(regs) < n {
		return 0, fmt.Errorf("modbus: type %q needs %d registers, have %d", t, n, len(regs))
	}
	if t == Int16 {
		return float64(int16(regs[0])), nil
	}
	if t == Uint16 {
		return float64(regs[0]), nil
	}
	hi, lo := regs[0], regs[1]
	if lowFirst {
		hi, lo = lo, hi
	}
	u := uint32(hi)<<16 | uint32(lo)
	switch t {
	case Int32:
		return float64(int32(u)), nil
	case Uint32:
		return float64(u), nil
	}
	return float64(math.Float32frombits(u)), nil
}
