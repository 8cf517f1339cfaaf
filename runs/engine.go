package runs

import (
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/report"
)

// The daemon's replay bounds: a restarted daemon reloads at most ResumeWindow of
// readings, and at most ResumePerChannel readings of each channel, into its trackers.
// Engine.Forecast replays a run with the same bounds.
const (
	ResumeWindow     = 12 * time.Hour
	ResumePerChannel = 16384
)

// Engine is the daemon's forecasting engine for one configuration: the bench's
// channel specs (config.ChannelSpecs) and its tracker options. A report replays
// the journal through it so that it shows the figures the daemon showed.
type Engine struct {
	Specs   []predict.ChannelSpec
	Options predict.TrackerOptions
}

// spec returns the spec of channel.
func (e Engine) spec(channel string) (predict.ChannelSpec, bool) {
	for _, s := range e.Specs {
		if s.Name == channel {
			return s, true
		}
	}
	return predict.ChannelSpec{}, false
}

// Forecast rebuilds the forecast the daemon made for run: a bench with the channel's
// configured specimen and targets, its measured ambient channel, the daemon's tracker
// options and its restart bounds, fed the journal's readings of both channels in the
// order they were recorded, up to the time of the last forecast recorded for the run
// (the run's stop or its newest reading when none was), then fitted once, as a
// restarted daemon does.
//
// That is the forecast the daemon showed when it recorded its last forecast of the
// run (the daemon records one as a run stops), on the condition that it fitted those
// same readings: true while the channel's segment holds at most ResumePerChannel
// readings within ResumeWindow (the replay, like a restarted daemon, starts from the
// newest of them; a daemon that ran through keeps the segment from its start, thinned,
// so a longer run's figures differ slightly), and unless two consecutive readings were
// more than the tracker's jump (20 °C) apart, a step the live fit bridges when its
// curve predicts it and a replay, which fits once at the end, cannot.
//
// A channel that is no longer configured falls back to Refit (with a note saying so).
func (e Engine) Forecast(j *journal.Journal, run journal.Run) (*predict.Forecast, error) {
	spec, ok := e.spec(run.Channel)
	if !ok {
		fc, err := Refit(j, run, e.Options)
		if fc != nil {
			fc.Notes = append(fc.Notes, fmt.Sprintf("Channel %s is not in the configuration: refitted with the run's own targets and specimen, not as the daemon did.", run.Channel))
		}
		return fc, err
	}
	until, err := replayEnd(j, run)
	if err != nil || until.IsZero() {
		return nil, err
	}
	specs := []predict.ChannelSpec{spec}
	if amb, ok := e.spec(spec.Ambient); ok && spec.Ambient != "" {
		specs = append(specs, amb)
	}
	rs, err := replayReadings(j, specs, until)
	if err != nil {
		return nil, fmt.Errorf("report of run %s: %w", run.ID, err)
	}
	b := predict.NewBench(specs, e.Options)
	b.SetPlaced(run.Channel, true)
	b.Restore(func(observe func(string, time.Time, float64)) {
		for _, r := range rs {
			observe(r.Channel, r.Time, r.Celsius)
		}
	})
	fc := b.Snapshot()[0].Forecast
	if fc == nil {
		return nil, nil
	}
	fc.Notes = append(fc.Notes, engineNotes(run, spec, until)...)
	return fc, nil
}

// engineNotes say how the report's forecast was made.
func engineNotes(run journal.Run, spec predict.ChannelSpec, until time.Time) []string {
	how := "the ambient fitted"
	if spec.Ambient != "" {
		how = "the ambient measured on " + spec.Ambient
	}
	notes := []string{fmt.Sprintf("Replayed from the journal as the daemon forecast it: the channel's configured specimen and targets, %s, readings up to %s (the daemon's last recorded forecast of the run).",
		how, until.UTC().Format(time.RFC3339))}
	if strings.TrimSpace(run.SpecimenSpec) != "" && spec.Specimen == nil {
		notes = append(notes, "The run's stored specimen description was not used: the daemon forecasts with the channel's configured specimen (channels[].specimen), none here.")
	}
	return notes
}

// replayEnd is the time of the last forecast recorded for run; without one, the
// newest reading of the run. Zero when the run has no readings.
func replayEnd(j *journal.Journal, run journal.Run) (time.Time, error) {
	hist, err := j.ForecastHistory(run.ID)
	if err != nil {
		return time.Time{}, err
	}
	var end time.Time
	for _, p := range hist {
		if p.Time.After(end) {
			end = p.Time
		}
	}
	if !end.IsZero() {
		return end, nil
	}
	rs, err := report.RunReadings(j, run)
	if err != nil || len(rs) == 0 {
		return time.Time{}, err
	}
	return rs[len(rs)-1].Time, nil
}

// replayReadings returns the OK readings of the specs' channels from until −
// ResumeWindow to until, at most ResumePerChannel of each (the newest), in the
// journal's replay order (time, then the order they were recorded in), as the
// daemon's restart replays them.
func replayReadings(j *journal.Journal, specs []predict.ChannelSpec, until time.Time) ([]daq.Reading, error) {
	want := map[string]bool{}
	for _, s := range specs {
		want[s.Name] = true
	}
	var all []daq.Reading
	err := j.ReplayBefore(until.Add(-ResumeWindow), math.MaxInt64, func(r daq.Reading) bool {
		if r.Time.After(until) {
			return false
		}
		if want[r.Channel] {
			all = append(all, r)
		}
		return true
	})
	if err != nil {
		return nil, err
	}
	// Each channel starts at its ResumePerChannel-th newest reading (of any status).
	start, count := map[string]time.Time{}, map[string]int{}
	for i := len(all) - 1; i >= 0; i-- {
		r := all[i]
		if count[r.Channel]++; count[r.Channel] == ResumePerChannel {
			start[r.Channel] = r.Time
		}
	}
	out := all[:0]
	for _, r := range all {
		if r.OK() && !r.Time.Before(start[r.Channel]) {
			out = append(out, r)
		}
	}
	return out, nil
}
