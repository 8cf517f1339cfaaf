package journal

import (
	"math"
	"testing"

	"github.com/settle-lab/settle/daq"
)

// Every value comes back bit for bit, in the form (and size) expected. The figures
// are a logger's decimals and the cases the compact form must refuse; the float64
// facts (−0, NaN payloads, 1/3 not decimal) are IEEE 754 (from memory).
func TestValueRoundTrip(t *testing.T) {
	tests := []struct {
		name    string
		celsius float64
		status  daq.Status
		compact bool
		maxInt  int64 // the compact integer's bound, so it stays 1–4 bytes on disk
	}{
		{"two decimals", 22.37, daq.StatusOK, true, 1 << 23},
		{"negative", -5.1, daq.StatusOK, true, 1 << 23},
		{"whole", 300, daq.StatusOK, true, 1 << 15},
		{"zero", 0, daq.StatusOK, true, 1 << 7},
		{"three decimals", 1064.181, daq.StatusOK, true, 1 << 31},
		{"fault keeps its value", 21.5, daq.StatusSpike, true, 1 << 15},
		{"clock fault", 19.25, daq.StatusClock, true, 1 << 23},
		{"from °F: no short decimal", (70.1 - 32) * 5 / 9, daq.StatusOK, false, 0},
		{"a third", 1.0 / 3, daq.StatusOK, false, 0},
		{"negative zero", math.Copysign(0, -1), daq.StatusOK, false, 0},
		{"NaN", math.NaN(), daq.StatusOpen, false, 0},
		{"NaN with a payload", math.Float64frombits(0x7ff8_0000_dead_beef), daq.StatusUnparsable, false, 0},
		{"infinity", math.Inf(1), daq.StatusRange, false, 0},
		{"huge", 1e300, daq.StatusOK, false, 0},
		{"tiny", 5e-324, daq.StatusOK, false, 0},
		{"unknown status", 20, daq.Status(255), false, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			v := encodeValue(tc.celsius, tc.status)
			n, isInt := v.(int64)
			if isInt != tc.compact {
				t.Fatalf("encoded as %T (%v), want compact %v", v, v, tc.compact)
			}
			if isInt && (n >= tc.maxInt || n < -tc.maxInt) {
				t.Errorf("compact %d, want within ±%d", n, tc.maxInt)
			}
			c, s, err := decodeValue(v)
			if err != nil {
				t.Fatal(err)
			}
			if math.Float64bits(c) != math.Float64bits(tc.celsius) || s != tc.status {
				t.Errorf("got %v (%#x) %v, want %v (%#x) %v", c, math.Float64bits(c), s, tc.celsius, math.Float64bits(tc.celsius), tc.status)
			}
		})
	}
}

// A value that is neither form is an error naming what it is, not a reading.
func TestDecodeValueRejects(t *testing.T) {
	for _, v := range []any{"22.5", 22.5, []byte{1, 2, 3}, nil} {
		if c, s, err := decodeValue(v); err == nil {
			t.Errorf("decodeValue(%#v) = %v %v, want an error", v, c, s)
		}
	}
}

// FuzzValueRoundTrip: any float64 (by its bits) and any status comes back exactly,
// and a compact encoding is chosen only when it decodes to the same bits.
func FuzzValueRoundTrip(f *testing.F) {
	for _, c := range []float64{22.37, -5.1, 0, 1e300, 1.0 / 3, 1064.181, -273.15} {
		f.Add(math.Float64bits(c), uint8(0))
	}
	f.Add(uint64(0x8000_0000_0000_0000), uint8(4))
	f.Add(uint64(0x7ff8_0000_dead_beef), uint8(255))
	f.Fuzz(func(t *testing.T, bits uint64, status uint8) {
		c, s := math.Float64frombits(bits), daq.Status(status)
		got, gs, err := decodeValue(encodeValue(c, s))
		if err != nil {
			t.Fatal(err)
		}
		if math.Float64bits(got) != bits || gs != s {
			t.Fatalf("%#x %d came back as %#x %d", bits, status, math.Float64bits(got), gs)
		}
	})
}

// FuzzDecodeValue: whatever a file holds in the value column (any integer, any blob),
// decoding never panics, and a 9-byte blob decodes to exactly its bytes.
func FuzzDecodeValue(f *testing.F) {
	f.Add(int64(71584), []byte{0x40, 0x36, 0x5e, 0xb8, 0x51, 0xeb, 0x85, 0x1f, 0})
	f.Add(int64(-1), []byte{})
	f.Add(int64(math.MinInt64), []byte{1, 2, 3, 4, 5, 6, 7, 8, 9, 10})
	f.Fuzz(func(t *testing.T, n int64, b []byte) {
		if _, s, err := decodeValue(n); err != nil || s > 7 {
			t.Fatalf("integer %d: status %v, %v", n, s, err)
		}
		c, s, err := decodeValue(b)
		if len(b) != 9 {
			if err == nil {
				t.Fatalf("a %d-byte blob decoded", len(b))
			}
			return
		}
		if err != nil {
			t.Fatal(err)
		}
		back, _ := encodeValue(c, s).([]byte)
		if back != nil && string(back) != string(b) {
			t.Fatalf("blob %x came back as %x", b, back)
		}
	})
}
