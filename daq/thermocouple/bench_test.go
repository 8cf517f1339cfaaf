package thermocouple

import "testing"

// Speed targets (not asserted): a conversion must cost far less than reading a line
// from a serial port, i.e. well under a microsecond for EMF and Temperature.

func BenchmarkEMF(b *testing.B) {
	for _, ty := range Types() {
		lo, hi := ty.TemperatureRange()
		b.Run(ty.String(), func(b *testing.B) {
			c, step := lo, (hi-lo)/997
			for b.Loop() {
				if _, err := EMF(ty, c); err != nil {
					b.Fatal(err)
				}
				if c += step; c > hi {
					c = lo
				}
			}
		})
	}
}

func BenchmarkTemperature(b *testing.B) {
	for _, ty := range Types() {
		lo, hi := ty.EMFRange()
		b.Run(ty.String(), func(b *testing.B) {
			e, step := lo, (hi-lo)/997
			for b.Loop() {
				if _, err := Temperature(ty, e); err != nil {
					b.Fatal(err)
				}
				if e += step; e > hi {
					e = lo
				}
			}
		})
	}
}

func BenchmarkTemperatureExact(b *testing.B) {
	lo, hi := K.EMFRange()
	e, step := lo, (hi-lo)/997
	for b.Loop() {
		if _, err := TemperatureExact(K, e); err != nil {
			b.Fatal(err)
		}
		if e += step; e > hi {
			e = lo
		}
	}
}

func BenchmarkCompensated(b *testing.B) {
	for b.Loop() {
		if _, err := Compensated(K, 3.096, 25); err != nil {
			b.Fatal(err)
		}
	}
}
