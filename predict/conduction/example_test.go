package conduction_test

import (
	"fmt"

	"github.com/settle-lab/settle/predict/conduction"
	"github.com/settle-lab/settle/predict/material"
)

// A 20 cm stainless steel 304 shaft at 600 °C cools in 200 °C surroundings with
// h = 80 W/m²K (the inputs of Cengel & Ghajar 5th ed. Example 4-5): the centre and
// the surface after 45 minutes, and when the centre reaches 300 °C.
func Example() {
	steel, _ := material.Lookup("304")
	const r0, h, ti, tinf = 0.1, 80.0, 600.0, 200.0
	bi := h * r0 / steel.Conductivity
	toFo := func(seconds float64) float64 { return steel.Diffusivity() * seconds / (r0 * r0) }

	s := conduction.NewSeries(conduction.Cylinder, bi, 0)
	fo := toFo(45 * 60)
	fmt.Printf("Bi = %.3f, Fo = %.3f\n", bi, fo)
	fmt.Printf("centre %.0f °C, surface %.0f °C\n", tinf+s.Theta(fo, 0)*(ti-tinf), tinf+s.Theta(fo, 1)*(ti-tinf))

	foAt := s.At(0).FoAt((300 - tinf) / (ti - tinf))
	fmt.Printf("centre at 300 °C after %.0f min\n", foAt*r0*r0/steel.Diffusivity()/60)
	// Output:
	// Bi = 0.537, Fo = 1.068
	// centre 364 °C, surface 328 °C
	// centre at 300 °C after 67 min
}
