package exporter

import (
	"encoding/json"
	"net/http"
	"time"

	"github.com/settle-lab/settle/exporter/jsonval"

	"github.com/settle-lab/settle/predict"
)

// HandlingCautions are shown wherever settle reports a specimen ready to handle.
var HandlingCautions = []string{
	"This is an estimate from a fitted model, not a measurement of the whole specimen.",
	"Verify the temperature with a contact thermometer before handling.",
	"Wear protective gloves.",
	"The core lags the surface: the inside can be much hotter than the thermocouple reads.",
	"Your lab's own rules and local regulations take precedence.",
}

// ChannelsResponse is the body of GET /api/v1/channels.
type ChannelsResponse struct {
	GeneratedAt time.Time     `json:"generated_at"`
	Channels    []ChannelJSON `json:"channels"`
	// Demo is set when the daemon reads the built-in simulated rack, so the page can
	// say that its times are a time-lapse.
	Demo *DemoJSON `json:"demo,omitempty"`
}

// DemoJSON describes the demo's time-lapse.
type DemoJSON struct {
	// Speed is physical seconds per wall second (60: one wall minute is an hour).
	Speed float64 `json:"speed"`
}

// ChannelJSON is one channel in the API.
type ChannelJSON struct {
	Name    string `json:"name"`
	Ambient string `json:"ambient,omitempty"`
	// Role is "position" (a specimen position) or "ambient" (the room's air: never
	// fitted, no targets, never ready).
	Role string `json:"role"`
	// Empty is true for a position that holds no specimen (every target "empty").
	Empty    bool          `json:"empty"`
	Latest   *ReadingJSON  `json:"latest"`
	Forecast *ForecastJSON `json:"forecast"`
	Targets  []TargetJSON  `json:"targets"`
	Fault    *FaultJSON    `json:"fault"`
	Cautions []string      `json:"cautions,omitempty"`
	// Acknowledged is the acknowledgement of the specimen now on the channel (a
	// technician saw it ready); null when there is none.
	Acknowledged *Ack `json:"acknowledged"`
}

// ReadingJSON is a channel's newest reading.
type ReadingJSON struct {
	Time    time.Time `json:"time"`
	Celsius *float64  `json:"celsius"`
	Status  string    `json:"status"`
	Raw     string    `json:"raw,omitempty"`
}

// ForecastJSON is the fitted model of a channel.
type ForecastJSON struct {
	Model         string      `json:"model"`
	Parameters    []ParamJSON `json:"parameters"`
	TimeConstantS *float64    `json:"time_constant_s"`
	AmbientC      *float64    `json:"ambient_c"`
	RMSEC         *float64    `json:"rmse_c"`
	Biot          *float64    `json:"biot"`
	OutOfRange    bool        `json:"out_of_range"`
	Points        int         `json:"points"`
	SegmentStart  time.Time   `json:"segment_start"`
	FittedAt      time.Time   `json:"fitted_at"`
	Notes         []string    `json:"notes"`
}

// ParamJSON is one fitted parameter; StdErr is null where it is unknown (for
// example an ambient that was measured rather than fitted).
type ParamJSON struct {
	Name   string   `json:"name"`
	Value  *float64 `json:"value"`
	StdErr *float64 `json:"stderr"`
	Unit   string   `json:"unit,omitempty"`
}

// TargetJSON is one target's forecast. Times are null where there is none. Due is the
// time to plan with (predict.TargetForecast.Due): for a handling target the interval's
// late bound, by which the specimen is below the target with high confidence; At is
// the central estimate. Estimated marks a reached At that is the fitted crossing (in
// a gap of the readings, or at a surface-sensed specimen's unseen core).
type TargetJSON struct {
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

// Channels builds the API view of every channel from s.
func Channels(s State, now time.Time) ChannelsResponse {
	resp := ChannelsResponse{GeneratedAt: now.UTC(), Channels: []ChannelJSON{}}
	if s.Bench == nil {
		return resp
	}
	for _, ch := range s.Bench.Snapshot() {
		resp.Channels = append(resp.Channels, channelJSON(s, ch, now))
	}
	return resp
}

func channelJSON(s State, ch predict.ChannelState, now time.Time) ChannelJSON {
	out := ChannelJSON{Name: ch.Name, Ambient: ch.Ambient, Role: ch.Role, Targets: []TargetJSON{},
		Fault: channelFault(s, ch.Name, now)}
	if out.Role == "" {
		out.Role = predict.RolePosition
	}
	if s.Latest != nil {
		if r, ok := s.Latest.Get(ch.Name); ok {
			out.Latest = &ReadingJSON{Time: r.Time.UTC(), Status: r.Status.String(), Raw: r.Raw}
			if r.OK() {
				out.Latest.Celsius = jsonval.Num(r.Celsius)
			}
		}
	}
	f := ch.Forecast
	if f == nil {
		return out
	}
	out.Empty = f.Empty
	if !f.Empty {
		out.Forecast = forecastJSON(f)
	}
	for _, tf := range f.Targets {
		out.Targets = append(out.Targets, targetJSON(tf))
		if tf.Target.Handling && !f.Empty {
			out.Cautions = HandlingCautions
		}
	}
	if a, ok := s.Acks.Get(ch.Name, f.SegmentStart); ok && !f.Empty {
		out.Acknowledged = &a
	}
	return out
}

func forecastJSON(f *predict.Forecast) *ForecastJSON {
	return &ForecastJSON{
		Model: f.Model, Parameters: paramsJSON(f.Params), TimeConstantS: jsonval.Num(f.TimeConstant.Seconds()),
		AmbientC: jsonval.Num(f.Ambient), RMSEC: jsonval.Num(f.RMSE), Biot: jsonval.Num(f.Biot),
		OutOfRange: f.OutOfRange, Points: f.Points, SegmentStart: f.SegmentStart.UTC(),
		FittedAt: f.FittedAt.UTC(), Notes: append([]string{}, f.Notes...),
	}
}

func targetJSON(tf predict.TargetForecast) TargetJSON {
	return TargetJSON{
		Name: tf.Target.Name, Kind: tf.Target.Kind(), Celsius: jsonval.Num(tf.Celsius),
		State: string(tf.State), At: jsonval.Time(tf.At), Earliest: jsonval.Time(tf.Earliest),
		Latest: jsonval.Time(tf.Latest), Due: jsonval.Time(tf.Due()), Estimated: tf.Estimated,
	}
}

func paramsJSON(ps []predict.Param) []ParamJSON {
	out := make([]ParamJSON, 0, len(ps))
	for _, p := range ps {
		out = append(out, ParamJSON{Name: p.Name, Value: jsonval.Num(p.Value), StdErr: jsonval.Num(p.StdErr), Unit: p.Unit})
	}
	return out
}

// WriteJSON answers with v as indented JSON and status, uncached. Every settle JSON
// endpoint (the runs API too) answers through it.
func WriteJSON(w http.ResponseWriter, status int, v any) {
	w.Header().Set("Content-Type", "application/json; charset=utf-8")
	w.Header().Set("Cache-Control", "no-store")
	w.WriteHeader(status)
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	_ = enc.Encode(v) // the client may have gone; nothing useful to do with the error
}
