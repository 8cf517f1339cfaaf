// Package forecastjson is the one JSON form of settle's forecasts, shared by every
// output that shows them: the daemon's API and event stream (exporter), run reports
// (report) and `settle fit --json`. Unknown numbers and times are null (jsonval).
//
// The types say what they hold: Forecast is a fitted model, Param one fitted
// parameter, TargetForecast the forecast of one target (when it is crossed), and
// FileTarget the same on a curve file's own time axis (seconds). A target as a run
// asks for it, before any forecast, is predict.TargetSpec.
package forecastjson

import (
	"time"

	"github.com/settle-lab/settle/internal/jsonval"
	"github.com/settle-lab/settle/predict"
)

// Forecast is the fitted model of a channel.
type Forecast struct {
	Model         string    `json:"model"`
	Parameters    []Param   `json:"parameters"`
	TimeConstantS *float64  `json:"time_constant_s"`
	AmbientC      *float64  `json:"ambient_c"`
	RMSEC         *float64  `json:"rmse_c"`
	Biot          *float64  `json:"biot"`
	OutOfRange    bool      `json:"out_of_range"`
	Points        int       `json:"points"`
	SegmentStart  time.Time `json:"segment_start"`
	FittedAt      time.Time `json:"fitted_at"`
	// UpdatedAt is the newest reading the forecast reflects (predict.Forecast.UpdatedAt):
	// FittedAt, or a later reading that re-anchored the fit between fits.
	UpdatedAt time.Time `json:"updated_at"`
	// LeadS is how many seconds earlier than the fit re-anchoring has put the predicted
	// times (predict.Forecast.Lead; negative: later); 0 as fitted.
	LeadS float64  `json:"lead_s"`
	Notes []string `json:"notes"`
}

// NewForecast is f in JSON form. A forecast straight from a fit (UpdatedAt zero) is
// updated when it was fitted.
func NewForecast(f *predict.Forecast) *Forecast {
	updated := f.UpdatedAt
	if updated.IsZero() {
		updated = f.FittedAt
	}
	return &Forecast{
		Model: f.Model, Parameters: Params(f.Params), TimeConstantS: jsonval.Num(f.TimeConstant.Seconds()),
		AmbientC: jsonval.Num(f.Ambient), RMSEC: jsonval.Num(f.RMSE), Biot: jsonval.Num(f.Biot),
		OutOfRange: f.OutOfRange, Points: f.Points, SegmentStart: f.SegmentStart.UTC(),
		FittedAt: f.FittedAt.UTC(), UpdatedAt: updated.UTC(), LeadS: f.Lead.Seconds(), Notes: append([]string{}, f.Notes...),
	}
}

// Param is one fitted parameter; StdErr is null where it is unknown (for example an
// ambient that was measured rather than fitted).
type Param struct {
	Name   string   `json:"name"`
	Value  *float64 `json:"value"`
	StdErr *float64 `json:"stderr"`
	Unit   string   `json:"unit,omitempty"`
}

// Params is ps in JSON form (never nil).
func Params(ps []predict.Param) []Param {
	out := make([]Param, 0, len(ps))
	for _, p := range ps {
		out = append(out, Param{Name: p.Name, Value: jsonval.Num(p.Value), StdErr: jsonval.Num(p.StdErr), Unit: p.Unit})
	}
	return out
}

// TargetForecast is one target's forecast. Times are null where there is none. Due is
// the time to plan with (predict.TargetForecast.Due): for a handling target the
// interval's late bound, by which the specimen is below the target with high
// confidence; At is the central estimate. An open-ended interval ("not before
// Earliest", predict.StatePredicted) has Latest null, Due null for a handling target,
// and At null when the fitted curve does not reach the target. Estimated marks a reached At that is the
// fitted crossing (in a gap of the readings, or at a surface-sensed specimen's unseen
// core).
type TargetForecast struct {
	Name      string     `json:"name"`
	Kind      string     `json:"kind"`
	Celsius   *float64   `json:"celsius"`
	State     string     `json:"state"`
	At        *time.Time `json:"at"`
	Earliest  *time.Time `json:"earliest"`
	Latest    *time.Time `json:"latest"`
	Due       *time.Time `json:"due"`
	Estimated bool       `json:"estimated"`
}

// NewTargetForecast is tf in JSON form.
func NewTargetForecast(tf predict.TargetForecast) TargetForecast {
	return TargetForecast{
		Name: tf.Target.Name, Kind: tf.Target.Kind(), Celsius: jsonval.Num(tf.Celsius),
		State: string(tf.State), At: jsonval.Time(tf.At), Earliest: jsonval.Time(tf.Earliest),
		Latest: jsonval.Time(tf.Latest), Due: jsonval.Time(tf.Due()), Estimated: tf.Estimated,
	}
}
