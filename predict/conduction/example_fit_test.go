package conduction_test

import (
	"fmt"
	"math"

	"github.com/settle-lab/settle/predict/conduction"
)

// A thermocouple on the surface of a 10 cm concrete cylinder (our own invented
// readings, made here from the exact series with h = 40 W/m²K, 200 °C into 20 °C
// air): the fit recovers h and forecasts the core, which is far hotter than the
// surface the sensor sees.
func ExampleFitSeries() {
	sp := conduction.Specimen{Shape: conduction.Cylinder, Size: 0.05,
		Density: 2300, SpecificHeat: 880, Conductivity: 1.4, Sensor: conduction.Surface}
	exact := conduction.NewSeries(conduction.Cylinder, sp.Biot(40), 0)
	var times, celsius []float64
	for t := 60.0; t <= 3600; t += 60 {
		times = append(times, t)
		celsius = append(celsius, 20+180*exact.Theta(sp.Fo(t), 1))
	}
	fit, err := conduction.FitSeries(sp, times, celsius, math.NaN())
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("h = %.1f W/m²K, Bi = %.2f, T0 = %.1f °C, ambient %.1f °C\n",
		fit.H.Value, fit.Bi.Value, fit.Initial.Value, fit.Ambient.Value)
	fmt.Printf("after 30 min: surface %.1f °C, centre %.1f °C\n",
		fit.Temperature(conduction.Surface, 1800), fit.Hottest(1800))
	// Output:
	// h = 40.0 W/m²K, Bi = 1.43, T0 = 200.0 °C, ambient 20.0 °C
	// after 30 min: surface 65.2 °C, centre 102.3 °C
}
