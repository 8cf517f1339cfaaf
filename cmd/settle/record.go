package main

import (
	"context"
	"log/slog"
	"net/http"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/runs"
)

// resumeWindow is how far back a restarted daemon reloads readings into its trackers
// (reports replay runs with the same bound).
const resumeWindow = runs.ResumeWindow

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
		run, err := runs.Start(r.j, journal.RunSpec{Channel: ch.Name, Specimen: ch.Run.Specimen,
			Description: ch.Run.Description, Origin: "config"}, r.targets[ch.Name])
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

// observe starts a run when rd (already journaled) completes a placement on a channel
// that has targets and no active run. It logs each decision of the placement rule.
func (r *recorder) observe(rd daq.Reading) {
	if len(r.targets[rd.Channel]) == 0 {
		return
	}
	p, ok, decision := r.watch.Observe(rd)
	if decision != "" && !ok {
		r.log.Info("placement rule", "channel", rd.Channel, "decision", decision, "at", rd.Time)
	}
	if !ok {
		return
	}
	if id, busy := r.j.ActiveRunID(rd.Channel); busy {
		r.log.Info("placement rule: placement seen, run already active", "channel", rd.Channel, "run", id, "start", p.Start)
		return
	}
	run, err := runs.StartPlaced(r.j, rd.Channel, p.Start, r.targets[rd.Channel])
	if err != nil {
		r.log.Warn("auto run not started", "channel", rd.Channel, "err", err)
		return
	}
	r.log.Info("specimen placed: run started", "run", run.ID, "channel", rd.Channel, "start", p.Start,
		"ambient", p.Ambient, "peak", p.PeakCelsius, "hot_start", p.HotStart, "baseline", p.Baseline)
}

// placementAPI serves GET /api/v1/placement: each targeted channel's placement-rule
// phase and last decision.
func (r *recorder) placementAPI() http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, _ *http.Request) {
		httpjson.Write(w, http.StatusOK, map[string]any{"channels": r.watch.Status()})
	})
}

// runsAPI serves /api/v1/runs over the journal, with live forecasts from bench.
func (r *recorder) runsAPI(bench *predict.Bench, token string, engine *runs.Engine) http.Handler {
	return runs.API(r.j, runs.APIOptions{
		Token:  token,
		Engine: engine,
		Live: func(channel string) *predict.Forecast {
			for _, s := range bench.SnapshotFitted() { // a report reproduces fits, not re-anchoring
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
		Ambient: func(channel string) bool {
			for _, s := range bench.Snapshot() {
				if s.Name == channel {
					return s.Role == predict.RoleAmbient
				}
			}
			return false
		},
		Logger: r.log,
	})
}

// ackMemory is how far back the acknowledgements of ready specimens are restored at
// start-up: a specimen acknowledged longer ago has long left the rack.
const ackMemory = 7 * 24 * time.Hour

// acks returns the acknowledgements table over the journal: each one is written to
// the journal before it is answered, and those of the last week are restored.
func (r *recorder) acks() *exporter.Acks {
	restored, err := r.j.Acknowledgements(time.Now().Add(-ackMemory))
	if err != nil {
		r.log.Warn("acknowledgements not restored", "err", err)
	}
	return exporter.NewAcks(exporter.AckOptions{
		Save:     r.j.Acknowledge,
		RunOf:    func(ch string) string { id, _ := r.j.ActiveRunID(ch); return id },
		Restored: restored,
	})
}

// maintain runs until ctx ends: every second it fits channels whose last readings
// arrived inside the fit gap, and every historyEvery it offers bench's forecasts to the
// journal's forecast history. Fits and history wait until replayed is closed, so the
// history never records the empty forecasts of a daemon still replaying.
func (r *recorder) maintain(ctx context.Context, bench *predict.Bench, replayed <-chan struct{}) {
	t := time.NewTicker(time.Second)
	defer t.Stop()
	last := time.Now()
	for {
		select {
		case <-ctx.Done():
			select {
			case <-replayed:
				runs.RecordFinalBench(r.j, bench.SnapshotFitted()) // the last fits before shutdown
			default:
			}
			return
		case now := <-t.C:
			r.syncPlaced(bench)
			if r.pendingConfigured != nil {
				r.startConfigured(r.pendingConfigured)
			}
			select {
			case <-replayed:
			default:
				continue
			}
			bench.FitPending()
			if now.Sub(last) >= historyEvery {
				runs.RecordBench(r.j, bench.SnapshotFitted())
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

// replayPerChannel bounds the readings of each channel a restart feeds to the trackers
// (the trackers keep at most 4,096 points per segment, thinned as it grows).
const replayPerChannel = runs.ResumePerChannel

// resume reloads the last resumeWindow of readings committed up to the mark seq (at
// most replayPerChannel per channel) into bench in one pass (one fit per channel at the
// end) and the newest valid reading of each channel into latest, so a restarted daemon
// shows forecasts soon rather than from scratch. It returns how many readings it
// replayed. Readings committed after the mark reach bench live.
//
// It gives up early (a shutdown during a long replay) once stop returns true.
func (r *recorder) resume(bench *predict.Bench, latest *exporter.Latest, seq int64, stop func() bool) (int, error) {
	n, start := 0, time.Now()
	since := start.Add(-resumeWindow)
	r.syncPlaced(bench)
	starts, err := r.j.ReplayStarts(since, seq, replayPerChannel)
	if err == nil {
		from := start
		for _, t := range starts {
			if t.Before(from) {
				from = t
			}
		}
		bench.Restore(func(observe func(string, time.Time, float64)) {
			err = r.j.ReplayBefore(from, seq, func(rd daq.Reading) bool {
				if rd.OK() && !rd.Time.Before(starts[rd.Channel]) {
					n++
					observe(rd.Channel, rd.Time, rd.Celsius)
				}
				return n%4096 != 0 || !stop()
			})
		})
	}
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
	r.log.Info("journal replay done", "readings", n, "took", time.Since(start).Round(time.Millisecond))
	return n, err
}

// close flushes and closes the journal; it is the last thing the daemon does.
func (r *recorder) close() {
	if err := r.j.Close(); err != nil {
		r.log.Error("journal close: some readings were not written", "err", err)
	}
}
