package report

import (
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/settle-lab/settle/internal/forecastjson"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/internal/jsonval"
	"github.com/settle-lab/settle/predict"
)

// Summary is the JSON summary of a run. Numbers that are unknown are null.
type Summary struct {
	// Run is the run as recorded: channel, specimen, description, specimen
	// description, targets, start, stop and reading statistics.
	Run journal.Run `json:"run"`
	// Model is the fitted model; null when there is no fit.
	Model *Model `json:"model"`
	// Targets are the run's targets with forecast, observed crossing and history.
	Targets []TargetSummary `json:"targets"`
	// Cautions are shown when a target marks a specimen safe to handle.
	Cautions []string `json:"cautions,omitempty"`
	// Acknowledgements are the technicians' acknowledgements that the specimen was
	// seen ready (the board's button or the API), with who and when.
	Acknowledgements []journal.Ack `json:"acknowledgements"`
	// GeneratedAt is when the report was made.
	GeneratedAt time.Time `json:"generated_at"`
}

// Model is the fitted model of a run: forecastjson.Forecast's values under the names
// the report has always used ("name" for the model, h_w_m2k added).
type Model struct {
	Name          string               `json:"name"`
	Parameters    []forecastjson.Param `json:"parameters"`
	TimeConstantS *float64             `json:"time_constant_s"`
	AmbientC      *float64             `json:"ambient_c"`
	RMSEC         *float64             `json:"rmse_c"`
	// HWm2K is the surface heat transfer coefficient h, W/(m²·K), when the model
	// reports it (parameter h_w_m2k, or one in W/(m²·K)); null otherwise.
	HWm2K        *float64  `json:"h_w_m2k"`
	Biot         *float64  `json:"biot"`
	Points       int       `json:"points"`
	SegmentStart time.Time `json:"segment_start"`
	FittedAt     time.Time `json:"fitted_at"`
	OutOfRange   bool      `json:"out_of_range"`
	Notes        []string  `json:"notes"`
}

// TargetSummary is one target of a run.
type TargetSummary struct {
	Name     string   `json:"name"`
	Celsius  *float64 `json:"celsius"`
	Within   *float64 `json:"within,omitempty"`
	Handling bool     `json:"handling,omitempty"`
	// State, PredictedAt, Earliest and Latest are the final forecast (null without
	// one).
	State       string     `json:"state,omitempty"`
	PredictedAt *time.Time `json:"predicted_at"`
	Earliest    *time.Time `json:"earliest"`
	Latest      *time.Time `json:"latest"`
	// Actual is the observed crossing, null when not reached (or not recorded).
	Actual *time.Time `json:"actual"`
	// ActualElapsedS is Actual in seconds since the run's start.
	ActualElapsedS *float64 `json:"actual_elapsed_s"`
	// ActualEstimated marks an Actual that is the fitted crossing inside a gap of the
	// readings (an unplugged logger) or at an unseen core, not a reading's time.
	ActualEstimated bool `json:"actual_estimated"`
	// History is how the forecast converged: each stored forecast, with its error
	// against the observed crossing when there is one.
	History []HistoryPoint `json:"history"`
	// ConvergedAt is the forecast time from which every later prediction was within
	// 5 % of the then-remaining time (and at least 60 s) of the observed crossing —
	// our own convergence criterion; null when not reached or never converged.
	ConvergedAt *time.Time `json:"converged_at"`
}

// HistoryPoint is one stored forecast of a target.
type HistoryPoint struct {
	Time        time.Time  `json:"time"`
	State       string     `json:"state"`
	PredictedAt *time.Time `json:"predicted_at"`
	Earliest    *time.Time `json:"earliest"`
	Latest      *time.Time `json:"latest"`
	// ErrorS is PredictedAt − Actual in seconds (null without both).
	ErrorS *float64 `json:"error_s"`
	// Covered says whether the interval held the observed crossing (null without
	// both).
	Covered *bool `json:"covered"`
}

// Build assembles the summary of run from the journal and fc (nil: no model).
func Build(j *journal.Journal, run journal.Run, fc *predict.Forecast, now time.Time) (Summary, error) {
	s := Summary{Run: run, Model: modelOf(fc), GeneratedAt: now.UTC(), Targets: []TargetSummary{}}
	hist, err := j.ForecastHistory(run.ID)
	if err != nil {
		return s, err
	}
	cross, err := j.Crossings(run.ID)
	if err != nil {
		return s, err
	}
	estimated, err := j.EstimatedCrossings(run.ID)
	if err != nil {
		return s, err
	}
	if s.Acknowledgements, err = j.RunAcknowledgements(run.ID); err != nil {
		return s, err
	}
	targets, err := runTargets(run, fc)
	if err != nil {
		return s, err
	}
	for _, tg := range targets {
		ts := targetSummary(tg, fc, run.Started, cross[tg.Name], hist)
		ts.ActualEstimated = ts.Actual != nil && (ts.ActualEstimated || estimated[tg.Name])
		if tg.Handling {
			s.Cautions = predict.HandlingCautions
		}
		s.Targets = append(s.Targets, ts)
	}
	return s, nil
}

// runTargets are the live forecast's targets, else the run's stored ones.
func runTargets(run journal.Run, fc *predict.Forecast) ([]predict.Target, error) {
	if fc != nil && len(fc.Targets) > 0 {
		out := make([]predict.Target, len(fc.Targets))
		for i, tf := range fc.Targets {
			out[i] = tf.Target
		}
		return out, nil
	}
	ts, err := predict.ParseTargets(run.Targets)
	if err != nil {
		return nil, fmt.Errorf("run %s: %w", run.ID, err)
	}
	return ts, nil
}

func modelOf(fc *predict.Forecast) *Model {
	if fc == nil {
		return nil
	}
	f := forecastjson.NewForecast(fc) // the API's form, under the report's field names
	m := &Model{
		Name: f.Model, Parameters: f.Parameters, TimeConstantS: f.TimeConstantS, AmbientC: f.AmbientC,
		RMSEC: f.RMSEC, Biot: f.Biot, Points: f.Points, SegmentStart: f.SegmentStart,
		FittedAt: f.FittedAt, OutOfRange: f.OutOfRange, Notes: f.Notes,
	}
	if fc.TimeConstant == 0 {
		m.TimeConstantS = nil
	}
	for _, p := range fc.Params {
		if isH(p) {
			m.HWm2K = jsonval.Num(p.Value)
		}
	}
	if m.HWm2K == nil {
		m.Notes = append(m.Notes, "No single h: without the specimen's geometry and material the model cannot give h, and in the h(T) model h varies with temperature (h_scale scales it).")
	}
	return m
}

// isH reports whether p is the surface coefficient h (not, e.g., a scale on h).
func isH(p predict.Param) bool {
	unit := strings.NewReplacer(" ", "", "(", "", ")", "", "·", "").Replace(p.Unit)
	return p.Name == "h" || p.Name == "h_w_m2k" || unit == "W/m²K"
}

func targetSummary(tg predict.Target, fc *predict.Forecast, start, actual time.Time, hist []journal.ForecastPoint) TargetSummary {
	ts := TargetSummary{Name: tg.Name, Celsius: jsonval.Num(tg.Celsius), Handling: tg.Handling, History: []HistoryPoint{}}
	if tg.IsWithin() {
		ts.Within = jsonval.Num(tg.Within)
	}
	if fc != nil {
		for _, tf := range fc.Targets {
			if tf.Target.Name == tg.Name {
				ts.Celsius, ts.State = jsonval.Num(tf.Celsius), string(tf.State)
				ts.PredictedAt, ts.Earliest, ts.Latest = jsonval.Time(tf.At), jsonval.Time(tf.Earliest), jsonval.Time(tf.Latest)
				if tf.State == predict.StateReached && actual.IsZero() {
					actual, ts.ActualEstimated = tf.At, tf.Estimated // not recorded yet
				}
			}
		}
	}
	ts.Actual = jsonval.Time(actual)
	if !actual.IsZero() {
		ts.ActualElapsedS = jsonval.Num(actual.Sub(start).Seconds())
	}
	for _, p := range hist {
		if p.Target == tg.Name {
			ts.History = append(ts.History, historyPoint(p, actual))
		}
	}
	ts.ConvergedAt = convergedAt(ts.History, actual)
	return ts
}

func historyPoint(p journal.ForecastPoint, actual time.Time) HistoryPoint {
	h := HistoryPoint{Time: p.Time.UTC(), State: p.State, PredictedAt: jsonval.Time(p.At), Earliest: jsonval.Time(p.Earliest), Latest: jsonval.Time(p.Latest)}
	if actual.IsZero() || p.At.IsZero() || p.State == string(predict.StateReached) {
		return h
	}
	h.ErrorS = jsonval.Num(p.At.Sub(actual).Seconds())
	if !p.Earliest.IsZero() && !p.Latest.IsZero() {
		in := !actual.Before(p.Earliest) && !actual.After(p.Latest)
		h.Covered = &in
	}
	return h
}

// convergedAt is the first history time after which every prediction made before the
// crossing was within max(60 s, 5 % of the remaining time) of it.
func convergedAt(hist []HistoryPoint, actual time.Time) *time.Time {
	if actual.IsZero() {
		return nil
	}
	var from *time.Time
	for i := range hist {
		h := hist[i]
		if h.ErrorS == nil || h.Time.After(actual) {
			continue
		}
		tol := math.Max(60, 0.05*actual.Sub(h.Time).Seconds())
		if math.Abs(*h.ErrorS) > tol {
			from = nil
			continue
		}
		if from == nil {
			t := h.Time
			from = &t
		}
	}
	return from
}
