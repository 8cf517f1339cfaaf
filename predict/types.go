package predict

import (
	"math"
	"time"
)

// Target is a temperature a channel is expected to reach.
//
// Exactly one of Celsius or Within is meaningful: a Celsius target is a fixed
// temperature; a Within target (Celsius is NaN) is reached when the temperature comes
// within Within °C of the temperature the channel settles toward (the fitted ambient).
type Target struct {
	// Name is the target's name, unique per channel (config `targets[].name`).
	Name string
	// Celsius is the fixed target temperature, or NaN for a Within target.
	Celsius float64
	// Within is the band half-width in °C around the settling temperature, or 0.
	Within float64
	// Hold is how long the temperature must stay inside the band (0: no hold).
	Hold time.Duration
	// Handling marks a target at which a person may touch the specimen; outputs that
	// report it reached show the handling cautions.
	Handling bool
}

// IsWithin reports whether the target is relative to the settling temperature.
func (t Target) IsWithin() bool { return math.IsNaN(t.Celsius) }

// Kind names what the target is for: "handling" (safe to touch), "settle" (within a
// band of the settling temperature) or "temperature" (a fixed temperature).
func (t Target) Kind() string {
	switch {
	case t.Handling:
		return "handling"
	case t.IsWithin():
		return "settle"
	default:
		return "temperature"
	}
}

// State is the forecast state of one target. Every surface (settle fit, the API, the
// page, the metrics, webhooks and reports) reports these states as the engine decides
// them; the README's states table says what each requires of the readings and the fit.
type State string

// The target states.
const (
	// StatePredicted has a predicted crossing time with bounds. With a fitted (not
	// measured) ambient, a target that some settling temperatures the readings allow
	// never reach has an open-ended interval, "not before Earliest": Latest is zero,
	// and so is At when the fitted curve itself does not reach the target.
	StatePredicted State = "predicted"
	// StateReached: the readings themselves have crossed the target. The median of the
	// latest readings is on the target's side, and earlier in the same segment the
	// specimen was seen on the other side (a position that read room temperature from
	// the start never "reaches" a handling target). At is the observed entry into the
	// final run of readings across the target, or, when that entry follows a gap in
	// the readings, the fitted crossing inside the gap (Estimated is then true). For a
	// handling target judged at the core of a surface-sensed specimen, the surface
	// readings must be across and the core's fitted crossing (its late bound) past.
	StateReached State = "reached"
	// StateUnreachable: the settling temperature is credibly beyond the target: a
	// measured ambient beyond it, or a fitted one that is plausible for a room, whose
	// interval excludes the target, toward which the readings have visibly bent.
	StateUnreachable State = "unreachable"
	// StateInsufficient: not enough data, or data too ambiguous, for a forecast yet.
	StateInsufficient State = "insufficient"
	// StateHolding: inside the band, waiting out the hold time.
	StateHolding State = "holding"
	// StateEmpty: the position holds no specimen: no run is active, no placement was
	// seen, and the readings have stayed near the room's temperature. Never ready.
	StateEmpty State = "empty"
)

// Param is one fitted parameter with its standard error (NaN when unknown).
type Param struct {
	Name   string  `json:"name"`
	Value  float64 `json:"value"`
	StdErr float64 `json:"stderr"`
	Unit   string  `json:"unit,omitempty"`
}

// TargetForecast is the forecast for one target.
type TargetForecast struct {
	// Target is the target this forecast is for.
	Target Target
	// Celsius is the resolved target temperature (for a Within target, the band edge
	// on the specimen's side of the settling temperature).
	Celsius float64
	// State is the forecast state.
	State State
	// At is the predicted crossing (StatePredicted, StateHolding: the hold's end) or
	// the observed one (StateReached); zero otherwise, and for a predicted target
	// whose fitted curve does not reach it (an open-ended interval).
	At time.Time
	// Earliest and Latest bound At (the interval's lower and upper ends); zero when
	// State is not StatePredicted or StateHolding. Latest is zero for an open-ended
	// interval ("not before Earliest").
	Earliest, Latest time.Time
	// Estimated is true when a reached target's At is not a reading's time but the
	// fitted crossing inside a gap in the readings (an unplugged logger, a pause).
	Estimated bool
}

// Due is the time to plan with: for a predicted handling target the interval's late
// bound (the specimen is below the target by then with high confidence), otherwise
// At, the central estimate. Zero when the state has no time, and for a predicted
// handling target with an open-ended interval (no time is safe to plan with; only
// "not before Earliest" is known).
func (tf TargetForecast) Due() time.Time {
	if tf.Target.Handling && tf.State == StatePredicted {
		return tf.Latest
	}
	return tf.At
}

// Forecast is a channel's fitted model and the forecasts for its targets.
type Forecast struct {
	// Model names the fitted model, e.g. "lumped"; empty when Empty is true.
	Model string
	// Empty is true when the position holds no specimen (see StateEmpty): nothing was
	// fitted and every target is StateEmpty.
	Empty bool
	// Params are the fitted parameters with standard errors.
	Params []Param
	// TimeConstant is the fitted time constant (0 when the model has none).
	TimeConstant time.Duration
	// Ambient is the temperature the channel settles toward, °C.
	Ambient float64
	// RMSE is the root-mean-square residual of the fit, °C.
	RMSE float64
	// Biot is the Biot number where the specimen is known, else NaN.
	Biot float64
	// Points is how many readings the fit used.
	Points int
	// SegmentStart is the time of the first reading of the fitted segment.
	SegmentStart time.Time
	// FittedAt is the time of the last reading the fit used.
	FittedAt time.Time
	// UpdatedAt is the time of the newest reading the forecast reflects: FittedAt, or,
	// from a Tracker, a later reading that re-anchored the fitted curve to where the
	// readings are (its predicted crossings move with it; states change only at a fit).
	// Zero from Analyze.
	UpdatedAt time.Time
	// Lead is how much earlier than its fit re-anchoring has put the predicted times
	// (negative: later): the specimen's lead on the fitted curve at UpdatedAt. Zero as
	// fitted. A predicted time re-anchoring held at UpdatedAt (a crossing the readings
	// are about to show) moved by less.
	Lead time.Duration
	// Notes explain the model choice and any validity concern, one sentence each.
	Notes []string
	// OutOfRange is true when the model is used outside its validity range (for example
	// a lumped fit where the Biot number is 0.1 or more); Notes say why.
	OutOfRange bool
	// Targets holds one forecast per configured target, in configuration order.
	Targets []TargetForecast
	// Curve evaluates the fitted model at a time (°C); nil when there is no fit.
	Curve func(time.Time) float64 `json:"-"`
	// Centre evaluates the fitted centre temperature (°C) where the sensor is on the
	// surface of a conduction-modelled specimen (the handling forecast follows it); nil
	// otherwise.
	Centre func(time.Time) float64 `json:"-"`
}
