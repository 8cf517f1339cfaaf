package predict_test

import (
	"fmt"
	"math"
	"time"

	"github.com/settle-lab/settle/predict"
)

// Fit the first two seconds of a thermocouple junction heating in a 200 °C gas stream
// (the inputs of Incropera 6th ed. Example 5.1: τ = 1 s, Ti = 25 °C) and forecast when
// it reaches 199 °C: τ·ln(175/1) ≈ 5.16 s.
func ExampleFitLumped() {
	var p predict.LumpedProblem
	for i := 0; i <= 40; i++ {
		t := 0.05 * float64(i)
		p.Times = append(p.Times, t)
		p.Celsius = append(p.Celsius, 200-175*math.Exp(-t))
	}
	fit, err := predict.FitLumped(p, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	start := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	fc := predict.ForecastLumped(&fit, &p, start, []predict.Target{{Name: "199", Celsius: 199}}, nil)
	fmt.Printf("ambient %.2f °C, excess %.2f °C, tau %.3f s\n", fit.Ambient, fit.Excess, fit.Tau)
	fmt.Printf("%s: %s at %.2f s\n", fc[0].Target.Name, fc[0].State, fc[0].At.Sub(start).Seconds())
	// Output:
	// ambient 200.00 °C, excess -175.00 °C, tau 1.000 s
	// 199: predicted at 5.16 s
}
