package thermocouple

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// Fuzz targets: the EMF and temperature values come from outside bytes (logger lines,
// the command line). Seeds: f.Add below and testdata/fuzz/<name>.

// checkErr requires err to be a range or type error of the right kind.
func checkErr(t *testing.T, ty Type, err error) {
	t.Helper()
	if ty.valid() {
		var re *RangeError
		if !errors.Is(err, ErrOutOfRange) || !errors.As(err, &re) || re.Type != ty {
			t.Fatalf("error %v: want a *RangeError for type %v", err, ty)
		}
		return
	}
	if !errors.Is(err, ErrUnknownType) {
		t.Fatalf("error %v: want ErrUnknownType", err)
	}
}

func FuzzEMF(f *testing.F) {
	f.Add(byte('K'), 100.0)
	f.Add(byte('B'), 0.0)
	f.Add(byte('S'), 1768.1)
	f.Add(byte('T'), -270.0)
	f.Add(byte('X'), 20.0)
	f.Add(byte('J'), math.NaN())
	f.Fuzz(func(t *testing.T, letter byte, c float64) {
		ty := Type(letter)
		mV, err := EMF(ty, c)
		lo, hi := ty.TemperatureRange()
		inRange := ty.valid() && c >= lo && c <= hi
		if err != nil {
			if inRange {
				t.Fatalf("EMF(%v, %g): %v, but %g is in %g..%g", ty, c, err, c, lo, hi)
			}
			checkErr(t, ty, err)
			return
		}
		if !inRange || math.IsNaN(mV) || math.IsInf(mV, 0) || math.Abs(mV) > 80 {
			t.Fatalf("EMF(%v, %g) = %g with no error", ty, c, mV)
		}
	})
}

func FuzzTemperature(f *testing.F) {
	f.Add(byte('K'), 4.096, 0.0)
	f.Add(byte('K'), -6.458, 25.0)
	f.Add(byte('B'), 0.2, 0.0)
	f.Add(byte('E'), 76.373, 0.0)
	f.Add(byte('R'), 11.361, -50.0)
	f.Add(byte('N'), math.Inf(1), 0.0)
	f.Fuzz(func(t *testing.T, letter byte, mV, cj float64) {
		ty := Type(letter)
		lo, hi := ty.EMFRange()
		inRange := ty.valid() && mV >= lo && mV <= hi
		for name, fn := range map[string]func(Type, float64) (float64, error){"Temperature": Temperature, "TemperatureExact": TemperatureExact} {
			c, err := fn(ty, mV)
			if err != nil {
				if inRange && name == "Temperature" {
					t.Fatalf("%s(%v, %g): %v, but %g is in %g..%g", name, ty, mV, err, mV, lo, hi)
				}
				checkErr(t, ty, err)
				continue
			}
			checkTemp(t, ty, c, name, mV)
		}
		c, err := Compensated(ty, mV, cj)
		if err != nil {
			checkErr(t, ty, err)
			return
		}
		checkTemp(t, ty, c, "Compensated", mV)
	})
}

// checkTemp requires a converted temperature to be finite and inside the type's range,
// widened by NIST's largest inverse error band (0.06 °C, reference file section 1.4)
// and by NIST's printed upper limit of type E, which is 0.003 °C above 1000 °C.
func checkTemp(t *testing.T, ty Type, c float64, name string, mV float64) {
	t.Helper()
	lo, hi := ty.TemperatureRange()
	if math.IsNaN(c) || c < lo-0.1 || c > hi+0.1 {
		t.Fatalf("%s(%v, %g) = %g, outside %g..%g", name, ty, mV, c, lo, hi)
	}
}

func FuzzParseType(f *testing.F) {
	for _, s := range []string{"K", "k", " t\n", "", "KK", "type K", "\xff"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		ty, err := ParseType(s)
		if err != nil {
			if !errors.Is(err, ErrUnknownType) {
				t.Fatalf("ParseType(%q): %v", s, err)
			}
			return
		}
		if !strings.EqualFold(strings.TrimSpace(s), ty.String()) {
			t.Fatalf("ParseType(%q) = %v", s, ty)
		}
	})
}
