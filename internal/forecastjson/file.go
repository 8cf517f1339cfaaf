package forecastjson

import (
	"math"
	"time"

	"github.com/settle-lab/settle/internal/jsonval"
	"github.com/settle-lab/settle/predict"
)

// FileFit is the JSON contract of `settle fit --json`: a forecast of a curve file,
// with times on the file's own axis (seconds, t_s).
type FileFit struct {
	Model      string             `json:"model"`
	UntilS     float64            `json:"until_s"`
	Parameters map[string]float64 `json:"parameters"`
	Biot       *float64           `json:"biot"`
	Notes      []string           `json:"notes"`
	Targets    []FileTarget       `json:"targets"`
}

// FileTarget is one target's forecast on a file's axis. DueS is the time to plan with
// (predict.TargetForecast.Due): for a handling target the interval's late bound. A
// handling target carries the cautions. A predicted target with an open-ended
// interval ("not before EarliestS") has LatestS null, DueS null for a handling
// target, and TS null when the fitted curve does not reach it.
type FileTarget struct {
	Name      string   `json:"name"`
	Kind      string   `json:"kind"`
	Celsius   *float64 `json:"celsius"`
	State     string   `json:"state"`
	TS        *float64 `json:"t_s"`
	EarliestS *float64 `json:"earliest_s"`
	LatestS   *float64 `json:"latest_s"`
	DueS      *float64 `json:"due_s"`
	Estimated bool     `json:"estimated,omitempty"`
	Cautions  []string `json:"cautions,omitempty"`
}

// NewFileFit is f in `settle fit --json` form: origin is the time of the file's t_s = 0
// and untilS the last second fitted.
func NewFileFit(f *predict.Forecast, origin time.Time, untilS float64) FileFit {
	at := func(t time.Time) *float64 { // null for a zero time (an open-ended interval's late end)
		if t.IsZero() {
			return nil
		}
		return jsonval.Num(t.Sub(origin).Seconds())
	}
	out := FileFit{
		Model: f.Model, UntilS: untilS, Parameters: map[string]float64{},
		Biot: jsonval.Num(f.Biot), Notes: append([]string{}, f.Notes...), Targets: []FileTarget{},
	}
	for _, p := range f.Params {
		if !math.IsNaN(p.Value) {
			out.Parameters[p.Name] = p.Value
		}
	}
	for _, tg := range f.Targets {
		j := FileTarget{Name: tg.Target.Name, Kind: tg.Target.Kind(), Celsius: jsonval.Num(tg.Celsius),
			State: string(tg.State), Estimated: tg.Estimated}
		if !tg.At.IsZero() {
			j.TS = at(tg.At)
		}
		if due := tg.Due(); !due.IsZero() {
			j.DueS = at(due)
		}
		if tg.Target.Handling {
			j.Cautions = predict.HandlingCautions
		}
		if tg.State == predict.StatePredicted || tg.State == predict.StateHolding {
			j.EarliestS, j.LatestS = at(tg.Earliest), at(tg.Latest)
		}
		out.Targets = append(out.Targets, j)
	}
	return out
}
