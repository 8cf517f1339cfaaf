package exporter

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/settle-lab/settle/internal/forecastjson"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/internal/jsonval"
	"github.com/settle-lab/settle/predict"
)

// Series limits.
const (
	// DefaultMaxPoints is how many readings a series returns when max_points is absent.
	DefaultMaxPoints = 600
	// MaxMaxPoints is the largest max_points a client may ask for.
	MaxMaxPoints = 10000
	// curvePoints is how many samples of the fitted curve a series returns at most.
	curvePoints = 240
)

// ChannelDetail is the body of GET /api/v1/channels/{name}: the channel as in the
// list plus the fit in full and how the channel has been reporting.
type ChannelDetail struct {
	ChannelJSON
	// Logger is the logger of the newest reading.
	Logger string `json:"logger,omitempty"`
	// LastReceived is the wall-clock time the newest reading arrived.
	LastReceived *time.Time `json:"last_received"`
	// H is the fitted effective surface coefficient where the specimen is known
	// (parameter h_w_m2k), else null.
	H *forecastjson.Param `json:"h_w_m2k"`
	// Biot is the Biot number where the specimen is known, else null.
	Biot *float64 `json:"biot"`
	// Notes explain the model choice and any validity concern.
	Notes []string `json:"notes"`
	// History is how many readings the exporter keeps for the series API.
	History int `json:"history_points"`
	// FaultCounts counts fault readings by status since the daemon started.
	FaultCounts map[string]uint64 `json:"fault_counts"`
}

// Detail builds the detail view of one channel; false when there is no such channel.
func Detail(s State, name string, now time.Time) (ChannelDetail, bool) {
	ch, ok := findChannel(s, name)
	if !ok {
		return ChannelDetail{}, false
	}
	d := ChannelDetail{ChannelJSON: channelJSON(s, ch, now), Notes: []string{}, FaultCounts: map[string]uint64{}}
	if f := ch.Forecast; f != nil {
		d.Biot, d.Notes = jsonval.Num(f.Biot), append(d.Notes, f.Notes...)
		for _, p := range forecastjson.Params(f.Params) {
			if p.Name == "h_w_m2k" {
				d.H = &p
			}
		}
	}
	if s.Latest != nil {
		if rc, ok := s.Latest.Reception(name); ok {
			d.Logger, d.LastReceived, d.History = rc.Logger, jsonval.Time(rc.Received), rc.Kept
		}
		for _, fc := range s.Latest.Faults() {
			if fc.Channel == name {
				d.FaultCounts[fc.Status.String()] = fc.Count
			}
		}
	}
	return d, true
}

func findChannel(s State, name string) (predict.ChannelState, bool) {
	if s.Bench == nil {
		return predict.ChannelState{}, false
	}
	for _, ch := range s.Bench.Snapshot() {
		if ch.Name == name {
			return ch, true
		}
	}
	return predict.ChannelState{}, false
}

// SeriesResponse is the body of GET /api/v1/channels/{name}/series. Readings and Curve
// are [unix milliseconds, °C] pairs, oldest first.
type SeriesResponse struct {
	Channel string `json:"channel"`
	// From and To are the window actually served.
	From time.Time `json:"from"`
	To   time.Time `json:"to"`
	// Total is how many valid readings the window holds before downsampling.
	Total int `json:"total"`
	// Readings are the valid readings, downsampled to at most max_points.
	Readings [][2]float64 `json:"readings"`
	// Faults are the fault readings in the window (the newest max_points).
	Faults []FaultPoint `json:"faults"`
	// Model is the fitted model, or "" when there is none.
	Model string `json:"model"`
	// Curve samples the fitted curve from the segment's start (or From) to To.
	Curve [][2]float64 `json:"curve"`
	// Centre samples the estimated centre temperature over the same times when the
	// sensor is on the surface of a conduction-modelled specimen; absent otherwise.
	Centre [][2]float64 `json:"centre,omitempty"`
	// Targets are the target temperatures with their forecasts.
	Targets []forecastjson.TargetForecast `json:"targets"`
}

// FaultPoint is one fault reading in a series.
type FaultPoint struct {
	Time   time.Time `json:"time"`
	Status string    `json:"status"`
}

// SeriesQuery is a parsed series request.
type SeriesQuery struct {
	// From and To bound the window; zero leaves an end open.
	From, To time.Time
	// MaxPoints caps the readings returned.
	MaxPoints int
}

// ParseSeriesQuery reads from, to and max_points. A time is RFC 3339, Unix seconds, or
// a negative duration such as -15m counted back from the channel's newest reading
// (newest; zero means now).
func ParseSeriesQuery(get func(string) string, newest time.Time) (SeriesQuery, error) {
	q := SeriesQuery{MaxPoints: DefaultMaxPoints}
	if newest.IsZero() {
		newest = time.Now()
	}
	var err error
	if q.From, err = parseWhen(get("from"), newest); err != nil {
		return q, fmt.Errorf("from: %w", err)
	}
	if q.To, err = parseWhen(get("to"), newest); err != nil {
		return q, fmt.Errorf("to: %w", err)
	}
	if !q.From.IsZero() && !q.To.IsZero() && q.To.Before(q.From) {
		return q, fmt.Errorf("to %s is before from %s", q.To.Format(time.RFC3339), q.From.Format(time.RFC3339))
	}
	if v := get("max_points"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || n < 2 || n > MaxMaxPoints {
			return q, fmt.Errorf("max_points: %q is not a whole number from 2 to %d", v, MaxMaxPoints)
		}
		q.MaxPoints = n
	}
	return q, nil
}

func parseWhen(v string, newest time.Time) (time.Time, error) {
	switch {
	case v == "":
		return time.Time{}, nil
	case strings.HasPrefix(v, "-"):
		if d, err := time.ParseDuration(v); err == nil {
			return newest.Add(d), nil
		}
	}
	if t, err := time.Parse(time.RFC3339Nano, v); err == nil {
		return t, nil
	}
	f, err := strconv.ParseFloat(v, 64)
	if err != nil || math.IsNaN(f) || math.Abs(f) > 1e11 {
		return time.Time{}, fmt.Errorf("%q is not RFC 3339, Unix seconds or a negative duration like -15m", v)
	}
	return time.Unix(0, int64(f*1e9)).UTC(), nil
}

// Series builds the series of one channel; false when there is no such channel.
func Series(s State, name string, q SeriesQuery) (SeriesResponse, bool) {
	ch, ok := findChannel(s, name)
	if !ok {
		return SeriesResponse{}, false
	}
	out := SeriesResponse{Channel: name, Readings: [][2]float64{}, Faults: []FaultPoint{},
		Curve: [][2]float64{}, Targets: []forecastjson.TargetForecast{}}
	var pts []Point
	if s.Latest != nil {
		pts = s.Latest.History(name, q.From, q.To)
	}
	var valid []Point
	for _, p := range pts {
		if p.Status == daq.StatusOK {
			valid = append(valid, p)
		} else {
			out.Faults = append(out.Faults, FaultPoint{Time: p.Time.UTC(), Status: p.Status.String()})
		}
	}
	if len(out.Faults) > q.MaxPoints {
		out.Faults = out.Faults[len(out.Faults)-q.MaxPoints:]
	}
	out.Total = len(valid)
	for _, p := range LTTB(valid, q.MaxPoints) {
		out.Readings = append(out.Readings, [2]float64{ms(p.Time), round3(p.Celsius)})
	}
	out.From, out.To = window(q, pts, ch.Forecast)
	if f := ch.Forecast; f != nil {
		out.Model = f.Model
		out.Targets = channelJSON(State{}, ch, time.Time{}).Targets
		out.Curve = sampleCurve(f.Curve, later(out.From, f.SegmentStart), out.To)
		out.Centre = sampleCurve(f.Centre, later(out.From, f.SegmentStart), out.To)
		if len(out.Centre) == 0 {
			out.Centre = nil
		}
	}
	return out, true
}

// window is the served window: the query's ends, else the readings' span, extended to
// the latest predicted crossing so that the curve reaches every forecast target.
func window(q SeriesQuery, pts []Point, f *predict.Forecast) (from, to time.Time) {
	from, to = q.From, q.To
	if from.IsZero() && len(pts) > 0 {
		from = pts[0].Time
	}
	if from.IsZero() && f != nil {
		from = f.SegmentStart
	}
	if to.IsZero() {
		if len(pts) > 0 {
			to = pts[len(pts)-1].Time
		}
		if f != nil {
			to = later(to, f.FittedAt)
			for _, tf := range f.Targets {
				if tf.State == predict.StatePredicted || tf.State == predict.StateHolding {
					to = later(to, tf.Latest)
				}
			}
		}
	}
	return from.UTC(), to.UTC()
}

// sampleCurve evaluates curve at up to curvePoints evenly spaced times in [from, to].
func sampleCurve(curve func(time.Time) float64, from, to time.Time) [][2]float64 {
	out := [][2]float64{}
	if curve == nil || from.IsZero() || !to.After(from) {
		return out
	}
	span := float64(to.Sub(from))
	for i := range curvePoints {
		t := from.Add(time.Duration(span * float64(i) / (curvePoints - 1)))
		if v := curve(t); finite(v) {
			out = append(out, [2]float64{ms(t), round3(v)})
		}
	}
	return out
}

// LTTB downsamples pts to at most n points with largest-triangle-three-buckets
// (Steinarsson 2013, "Downsampling Time Series for Visual Representation", MSc thesis,
// University of Iceland): it keeps the first and last points and from each bucket the
// point that spans the largest triangle with its neighbours, so peaks and knees survive.
func LTTB(pts []Point, n int) []Point {
	if n >= len(pts) || n < 3 {
		if n < len(pts) && n >= 1 {
			return append([]Point(nil), pts[len(pts)-n:]...)
		}
		return pts
	}
	out := make([]Point, 0, n)
	out = append(out, pts[0])
	every := float64(len(pts)-2) / float64(n-2)
	a := 0
	for i := range n - 2 {
		lo, hi := int(float64(i)*every)+1, int(float64(i+1)*every)+1
		nlo, nhi := hi, min(int(float64(i+2)*every)+1, len(pts))
		var ax, ay float64
		for _, p := range pts[nlo:nhi] {
			ax += sec(p.Time)
			ay += p.Celsius
		}
		cnt := float64(nhi - nlo)
		ax, ay = ax/cnt, ay/cnt
		px, py := sec(pts[a].Time), pts[a].Celsius
		best, bestArea := lo, -1.0
		for j := lo; j < hi; j++ {
			area := math.Abs((px-ax)*(pts[j].Celsius-py) - (px-sec(pts[j].Time))*(ay-py))
			if area > bestArea {
				best, bestArea = j, area
			}
		}
		out = append(out, pts[best])
		a = best
	}
	return append(out, pts[len(pts)-1])
}

func sec(t time.Time) float64  { return float64(t.UnixNano()) / 1e9 }
func ms(t time.Time) float64   { return float64(t.UnixMilli()) }
func round3(v float64) float64 { return math.Round(v*1000) / 1000 }
func later(a, b time.Time) time.Time {
	if b.After(a) {
		return b
	}
	return a
}
