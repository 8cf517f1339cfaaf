package exporter

import (
	"time"

	"github.com/settle-lab/settle/internal/forecastjson"

	"github.com/settle-lab/settle/internal/jsonval"
	"github.com/settle-lab/settle/predict"
)

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
	Empty    bool                          `json:"empty"`
	Latest   *ReadingJSON                  `json:"latest"`
	Forecast *forecastjson.Forecast        `json:"forecast"`
	Targets  []forecastjson.TargetForecast `json:"targets"`
	Fault    *FaultJSON                    `json:"fault"`
	Cautions []string                      `json:"cautions,omitempty"`
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

// Channels builds the API view of every channel from s.
func Channels(s State, now time.Time) ChannelsResponse {
	resp := ChannelsResponse{GeneratedAt: now.UTC(), Channels: []ChannelJSON{}}
	if s.Bench == nil {
		return resp
	}
	s = portsOnce(s)
	for _, ch := range s.Bench.Snapshot() {
		resp.Channels = append(resp.Channels, channelJSON(s, ch, now))
	}
	return resp
}

func channelJSON(s State, ch predict.ChannelState, now time.Time) ChannelJSON {
	out := ChannelJSON{Name: ch.Name, Ambient: ch.Ambient, Role: ch.Role, Targets: []forecastjson.TargetForecast{},
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
		out.Forecast = forecastjson.NewForecast(f)
	}
	for _, tf := range f.Targets {
		out.Targets = append(out.Targets, forecastjson.NewTargetForecast(tf))
		if tf.Target.Handling && !f.Empty {
			out.Cautions = predict.HandlingCautions
		}
	}
	if a, ok := s.Acks.Get(ch.Name, f.SegmentStart); ok && !f.Empty {
		out.Acknowledged = &a
	}
	return out
}
