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

// The daemon's path for one specimen position: a Tracker takes each cleaned reading
// (and the measured room air), finds the specimen's segment, fits on its schedule and
// keeps the latest Forecast. Our own invented run: a steel tile out of a 180 °C oven
// cooling in a 21 °C room with a 6-minute time constant, read every 2 s for 6
// minutes, with a handling target at 50 °C (crossed at 360·ln(159/29) s = 612.6 s, at 09:10:12.6). The handling target stays "predicted"
// until the readings themselves are below it; a forecast is an estimate (verify with
// a contact thermometer, wear gloves, the core lags the surface).
func ExampleTracker() {
	tr := predict.NewTracker([]predict.Target{{Name: "handle", Celsius: 50, Handling: true}}, predict.TrackerOptions{})
	start := time.Date(2026, 12, 3, 9, 0, 0, 0, time.UTC)
	for s := 0; s <= 360; s += 2 {
		tr.SetAmbient(21)
		tr.Add(start.Add(time.Duration(s)*time.Second), 21+159*math.Exp(-float64(s)/360))
	}
	fc := tr.Fit()
	tg := fc.Targets[0]
	fmt.Printf("model %s, settling toward %.1f °C, time constant %s\n", fc.Model, fc.Ambient, fc.TimeConstant.Round(time.Second))
	fmt.Printf("%s: %s at %s, interval %s to %s\n", tg.Target.Name, tg.State,
		tg.At.Format("15:04:05"), tg.Earliest.Format("15:04:05"), tg.Latest.Format("15:04:05"))
	// Output:
	// model lumped, settling toward 21.0 °C, time constant 6m0s
	// handle: predicted at 09:10:12, interval 09:09:48 to 09:10:37
}
