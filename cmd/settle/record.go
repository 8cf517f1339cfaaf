package main

import (
	"context"
	"encoding/json"
	"log/slog"
	"net/http"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/exporter/report"
	"github.com/settle-lab/settle/predict"
)

// resumeWindow is how far back a restarted daemon reloads readings into its trackers.
const resumeWindow = 12 * time.Hour

// historyEvery is how often the forecasts of channels with an active run are offered to
// the journal's forecast history (it stores only meaningful changes).
const historyEvery = 5 * time.Second

// recorder is the daemon's side of the journal: it appends every reading, starts a run
// when a specimen is placed on a channel with targets, and keeps each run's forecast
// history.
type recorder struct {
	j       *journal.Journal
	watch   *journal.PlacementWatcher
	targets map[string][]predict.Target // channel → its configured targets
	log     *slog.Logger
	// pendingConfigured are configured runs not started yet (journal unwritable);
	// only the maintain goroutine touches it after start-up.
	pendingConfigured []config.Channel
	warnedConfigured  bool
}

// openRecorder opens (or creates) the journal in cfg.DataDir.
func openRecorder(cfg *config.Config, specs []predict.ChannelSpec, log *slog.Logger) (*recorder, error) {
	j, err := journal.Open(cfg.DataDir, journal.Options{
		CommitInterval: cfg.Journal.Interval(),
		Retention:      journal.Retention{Age: cfg.Journal.Retention, Keep: time.Minute},
		Logger:         log.With("component", "journal"),
	})
	if err != nil {
		return nil, err
	}
	log.Info("journal", "path", j.Path(), "commit_interval", cfg.Journal.Interval())
	r := &recorder{j: j, watch: journal.NewPlacementWatcher(journal.PlacementOptions{}),
		targets: map[string][]predict.Target{}, log: log}
	for _, s := range specs {
		r.targets[s.Name] = s.Targets
	}
	r.startConfigured(cfg.Channels)
	return r, nil
}

// startConfigured starts the runs the configuration names (channels[].run) on channels
// that have no active run, so a restart continues the run it was in.
//
// A run that cannot be started (the journal is not writable yet, say a late mount) is
// kept in pendingConfigured and retried every second by maintain.
func (r *recorder) startConfigured(channels []config.Channel) {
	r.pendingConfigured = nil
	for _, ch := range channels {
		if ch.Run == nil {
			continue
		}
		if id, busy := r.j.ActiveRunID(ch.Name); busy {
			r.log.Info("run continues", "run", id, "channel", ch.Name)
			continue
		}
		run, err := r.j.StartRun(journal.RunSpec{Channel: ch.Name, Specimen: ch.Run.Specimen,
			Description: ch.Run.Description, Origin: "config", Targets: targetsJSON(r.targets[ch.Name])})
		if err != nil {
			if !r.warnedConfigured { // once, not on every retry
				r.log.Warn("configured run not started yet; retrying every second", "channel", ch.Name, "err", err)
				r.warnedConfigured = true
			}
			r.pendingConfigured = append(r.pendingConfigured, ch)
			continue
		}
		r.log.Info("run started", "run", run.ID, "channel", ch.Name, "specimen", ch.Run.Specimen)
	}
}

// observe records rd and starts a run when it completes a placement on a channel that
// has targets and no active run.
func (r *recorder) observe(rd daq.Reading) {
	r.j.Append(rd)
	if len(r.targets[rd.Channel]) == 0 {
		return
	}
	p, ok := r.watch.Observe(rd)
	if !ok {
		return
	}
	if _, busy := r.j.ActiveRunID(rd.Channel); busy {
		return
	}
	run, err := r.j.StartRun(journal.RunSpec{
		Channel:  rd.Channel,
		Specimen: "auto-" + p.Start.UTC().Format("20060102T150405Z"),
		Origin:   "auto",
		Start:    p.Start,
		Targets:  targetsJSON(r.targets[rd.Channel]),
	})
	if err != nil {
		r.log.Warn("auto run not started", "channel", rd.Channel, "err", err)
		return
	}
	r.log.Info("specimen placed: run started", "run", run.ID, "channel", rd.Channel, "start", p.Start)
}

func targetsJSON(ts []predict.Target) json.RawMessage {
	b, err := report.TargetsJSON(ts)
	if err != nil {
		return nil
	}
	return b
}

// runsAPI serves /api/v1/runs over the journal, with live forecasts from bench.
func (r *recorder) runsAPI(bench *predict.Bench, token string) http.Handler {
	return report.RunsAPI(r.j, report.APIOptions{
		Token: token,
		Live: func(channel string) *predict.Forecast {
			for _, s := range bench.Snapshot() {
				if s.Name == channel {
					return s.Forecast
				}
			}
			return nil
		},
		Channel: func(channel string) ([]predict.Target, bool) {
			ts, ok := r.targets[channel]
			return ts, ok
		},
		Logger: r.log,
	})
}

// maintain runs until ctx ends: every second it fits channels whose last readings
// arrived inside the fit gap, and every historyEvery it offers bench's forecasts to the
// journal's forecast history.
func (r *recorder) maintain(ctx context.Context, bench *predict.Bench) {
	t := time.NewTicker(time.Second)
	defer t.Stop()
	last := time.Now()
	for {
		select {
		case <-ctx.Done():
			report.RecordBench(r.j, bench.Snapshot()) // the last forecasts before shutdown
			return
		case now := <-t.C:
			r.syncPlaced(bench)
			bench.FitPending()
			if r.pendingConfigured != nil {
				r.startConfigured(r.pendingConfigured)
			}
			if now.Sub(last) >= historyEvery {
				report.RecordBench(r.j, bench.Snapshot())
				last = now
			}
		}
	}
}

// syncPlaced tells bench which channels have an active run: a position with a run
// holds a specimen and is never shown empty, whatever it reads.
func (r *recorder) syncPlaced(bench *predict.Bench) {
	for ch := range r.targets {
		_, active := r.j.ActiveRunID(ch)
		bench.SetPlaced(ch, active)
	}
}

// resume reloads the last resumeWindow of readings into bench in one pass (one fit per
// channel at the end) and the newest valid reading of each channel into latest, so a
// restarted daemon shows forecasts at once rather than from scratch.
func (r *recorder) resume(bench *predict.Bench, latest *exporter.Latest) {
	n, start := 0, time.Now()
	var err error
	r.syncPlaced(bench)
	bench.Restore(func(observe func(string, time.Time, float64)) {
		err = r.j.Replay(start.Add(-resumeWindow), func(rd daq.Reading) {
			if rd.OK() {
				n++
				observe(rd.Channel, rd.Time, rd.Celsius)
			}
		})
	})
	if err != nil {
		r.log.Warn("resume from journal incomplete", "err", err)
	}
	if last, err := r.j.Latest(); err == nil {
		for _, rd := range last {
			if rd.OK() { // a fault is shown again when the logger repeats it
				latest.Record(rd)
			}
		}
	}
	if n > 0 {
		r.log.Info("resumed from journal", "readings", n, "took", time.Since(start).Round(time.Millisecond))
	}
}

// close flushes and closes the journal; it is the last thing the daemon does.
func (r *recorder) close() {
	if err := r.j.Close(); err != nil {
		r.log.Error("journal close: some readings were not written", "err", err)
	}
}
