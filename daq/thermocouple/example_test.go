package thermocouple_test

import (
	"errors"
	"fmt"

	"github.com/settle-lab/settle/daq/thermocouple"
)

// A type K thermocouple at 100 °C gives 4.096 mV (NIST 1 °C table, via
// shared/reference section 1.5). With the cold junction at 25 °C (1.000 mV) the logger
// measures 3.096 mV; compensation recovers 100 °C within NIST's inverse error band.
func ExampleCompensated() {
	mV, _ := thermocouple.EMF(thermocouple.K, 100)
	fmt.Printf("%.3f mV\n", mV)
	c, _ := thermocouple.Compensated(thermocouple.K, 3.096, 25)
	fmt.Printf("%.1f °C\n", c)
	_, err := thermocouple.EMF(thermocouple.K, 1500)
	fmt.Println(errors.Is(err, thermocouple.ErrOutOfRange), err)
	// Output:
	// 4.096 mV
	// 100.0 °C
	// true thermocouple type K: temperature 1500 °C is outside the valid range -270 to 1372 °C
}
