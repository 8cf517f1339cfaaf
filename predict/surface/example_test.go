package surface_test

import (
	"fmt"

	"github.com/settle-lab/settle/predict/surface"
)

// A 25 mm steel bar (oxidised, ε ≈ 0.8) lying horizontally at 600 °C in a 20 °C room:
// radiation dominates while it is hot, convection once it is near handling
// temperature.
func ExampleCoefficient() {
	const d, eps = 0.025, 0.8
	for _, ts := range []float64{600, 200, 50} {
		hc := surface.Convection(surface.HorizontalCylinder, d, ts, 20)
		hr := surface.Radiation(eps, ts, 20)
		h := surface.Coefficient(surface.HorizontalCylinder, d, eps, ts, 20)
		fmt.Printf("%3.0f °C: h = %4.1f W/m²K (convection %4.1f, radiation %4.1f)\n", ts, h, hc, hr)
	}
	if err := surface.Check(surface.HorizontalCylinder, d, 600, 20); err != nil {
		fmt.Println(err)
	}
	// Output:
	// 600 °C: h = 56.2 W/m²K (convection 11.3, radiation 44.9)
	// 200 °C: h = 20.4 W/m²K (convection  9.6, radiation 10.8)
	//  50 °C: h = 11.8 W/m²K (convection  6.5, radiation  5.3)
}
