package journal

import (
	"encoding/binary"
	"fmt"
	"math"

	"github.com/settle-lab/settle/daq"
)

// A reading's value and status share one column, v, of one of two forms:
//
//   - INTEGER, the compact form: m×32 + d×8 + s, where the temperature is exactly
//     float64(m) / 10^d (d from 0 to 3 decimals) and s the status (below 8). A logger's
//     decimal figure (22.37, -5.1, 300) takes 1 to 4 bytes on disk this way, against 8
//     for a REAL.
//   - BLOB, the exact form for everything else (a converted °F value, NaN, -0, a
//     status of 8 or more): the float64's 8 bytes big-endian, then the status byte.
//
// Both forms give back the same float64 bit for bit: encodeValue picks the compact
// form only when decoding it reproduces the value's bits.

// pow10 are the divisors of the compact form, by number of decimals.
var pow10 = [...]float64{1, 10, 100, 1000}

// compactMax bounds |m| in the compact form: the product m×32 stays far inside int64
// and float64(m) is exact.
const compactMax = 1 << 50

// encodeValue turns a reading's temperature and status into the column value v.
func encodeValue(celsius float64, s daq.Status) any {
	if s < 8 && !math.IsNaN(celsius) && !math.IsInf(celsius, 0) {
		bits := math.Float64bits(celsius)
		for d, p := range pow10 {
			r := math.Round(celsius * p)
			if math.Abs(r) >= compactMax {
				break
			}
			// The check decodes as decodeValue does (from the integer: -0 fails it).
			if m := int64(r); math.Float64bits(float64(m)/p) == bits {
				return m*32 + int64(d)*8 + int64(s)
			}
		}
	}
	b := make([]byte, 9)
	binary.BigEndian.PutUint64(b, math.Float64bits(celsius))
	b[8] = byte(s)
	return b
}

// decodeValue is the inverse of encodeValue, for a value scanned from the column.
func decodeValue(v any) (float64, daq.Status, error) {
	switch v := v.(type) {
	case int64:
		low := v & 31 // two's complement: the low bits of a negative m×32 are zero too
		m, d, s := (v-low)/32, low>>3, daq.Status(low&7)
		if d >= int64(len(pow10)) {
			return 0, 0, fmt.Errorf("value %d: %d decimals", v, d)
		}
		return float64(m) / pow10[d], s, nil
	case []byte:
		if len(v) != 9 {
			return 0, 0, fmt.Errorf("value of %d bytes, want 9", len(v))
		}
		return math.Float64frombits(binary.BigEndian.Uint64(v)), daq.Status(v[8]), nil
	default:
		return 0, 0, fmt.Errorf("value of type %T", v)
	}
}
