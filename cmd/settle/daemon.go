package main

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"runtime"
	"sync"
	"sync/atomic"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/clean"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/runs"
)

// daemon wires acquisition, cleaning, the journal, tracking and the HTTP endpoints
// together. It holds no logic of its own beyond moving each reading through them.
type daemon struct {
	cfg     *config.Config
	log     *slog.Logger
	sources []daq.Source
	cleaner *clean.Cleaner
	clock   *clean.ClockCheck
	rec     *recorder
	bench   *predict.Bench
	latest  *exporter.Latest
	drops   *dropCounter
	replay  replayState
	ln      net.Listener
	srv     *exporter.Server
	metrics *exporter.Registry
}

// newDaemon builds every source and the bench from cfg and binds the listen address, so
// that configuration and port-in-use errors surface before anything starts running.
func newDaemon(cfg *config.Config, log *slog.Logger) (*daemon, error) {
	d := &daemon{cfg: cfg, log: log, latest: exporter.NewLatest(), drops: newDropCounter(log)}
	specs, err := config.ChannelSpecs(cfg.Channels)
	if err != nil {
		return nil, err
	}
	d.bench = predict.NewBench(specs, trackerOptions)
	d.cleaner = clean.New(cfg.CleanOptions())
	d.clock = clean.NewClockCheck(cfg.ClockOptions())
	for _, lc := range cfg.Loggers {
		src, err := daq.NewSource(lc.Logger, log.With("logger", lc.Name))
		if err != nil {
			return nil, err
		}
		d.sources = append(d.sources, src)
	}
	if d.rec, err = openRecorder(cfg, specs, log); err != nil {
		return nil, err
	}
	state := exporter.State{Bench: d.bench, Latest: d.latest, Ports: d.portStats, LoggerOf: cfg.ChannelLoggers(),
		Acks: d.rec.acks()}
	reg := exporter.NewRegistry(state)
	reg.Log, d.metrics = log, reg
	d.drops.journal = func() uint64 { return d.rec.j.Health().Dropped }
	reg.MustRegister(exporter.NewJournalCollector(d.rec.j.Health), d.drops, newFitCollector(d.bench))
	d.srv = exporter.NewServer(exporter.NewHandler(state, reg, exporter.Options{
		Runs: d.rec.runsAPI(d.bench, cfg.HTTP.Token, &runs.Engine{Specs: specs, Options: trackerOptions}), Token: cfg.HTTP.Token, Display: exporter.Display{Fahrenheit: cfg.Display.Fahrenheit(), TimeLapse: cfg.Display.TimeLapse}, Webhooks: cfg.Notify.Webhooks, Log: log,
		Health: d.replay.health, Placement: d.rec.placementAPI(),
	}), exporter.ServerOptions{TLSCert: cfg.HTTP.TLSCert, TLSKey: cfg.HTTP.TLSKey})
	daq.ReserveDescriptors() // low descriptors for the serial ports, before clients arrive
	d.ln, err = net.Listen("tcp", cfg.Listen)
	if err != nil {
		d.rec.close()
		return nil, fmt.Errorf("listen on %s (config key listen): %w", cfg.Listen, err)
	}
	return d, nil
}

// Addr is the address the HTTP server listens on.
func (d *daemon) Addr() string { return d.ln.Addr().String() }

func (d *daemon) portStats() []daq.PortStats {
	var out []daq.PortStats
	for _, s := range d.sources {
		if r, ok := s.(daq.StatsReporter); ok {
			out = append(out, r.Stats())
		}
	}
	return out
}

// trackerOptions are the daemon's tracker settings; reports replay runs with the same
// (runs.Engine). At most one fit per channel per wall-clock second: a time-lapse demo
// or a fast replay must not spend the CPU on fits (the maintenance loop fits what is
// left); a replay fits once, so the gap does not change its result.
var trackerOptions = predict.TrackerOptions{MinFitGap: time.Second}

// analysisQueue is how many readings may wait for cleaning and fitting. Readings are
// journaled before they enter it; when it is full (fits far behind) a reading still
// reaches the record but not the forecasts, and is counted as dropped.
const analysisQueue = 1 << 16

// Run serves until ctx ends, then stops the sources, commits the readings already
// received and shuts the HTTP server down with a timeout.
//
// Readings take two paths: acquisition screens each one (range, clock) and appends it
// to the journal at once, then hands it to analysis through a bounded queue; analysis
// replays the journal first (in the background: HTTP serves at once), then cleans,
// shows, detects placements and fits. A slow fit delays forecasts, never the record.
func (d *daemon) Run(ctx context.Context) error {
	// The readings committed before the sources start are replayed; later ones are live.
	mark, err := d.rec.j.LastSeq()
	if err != nil {
		d.log.Warn("journal replay skipped", "err", err)
		mark = -1
	}
	readings := make(chan daq.Reading, 1024)
	srcCtx, stopSources := context.WithCancel(ctx)
	defer stopSources()
	var wg sync.WaitGroup
	for _, s := range d.sources {
		wg.Add(1)
		go func(s daq.Source) {
			defer wg.Done()
			if err := s.Run(srcCtx, readings); err != nil && !errors.Is(err, context.Canceled) {
				d.log.Error("logger stopped", "logger", s.Name(), "err", err)
			}
		}(s)
	}
	go func() { wg.Wait(); close(readings) }()

	httpErr := make(chan error, 1)
	go func() { httpErr <- d.srv.Serve(d.ln) }()
	d.log.Info("serving", "addr", d.Addr(), "loggers", len(d.sources), "channels", len(d.cfg.Channels))

	queue := make(chan daq.Reading, analysisQueue)
	acquired := make(chan struct{})
	go func() { d.acquire(readings, queue); close(queue); close(acquired) }()
	// Fits run on a pool of workers, one per core: analysis hands them over and goes
	// on, and the API and /metrics read snapshots that never wait for a fit.
	fitCtx, stopFits := context.WithCancel(context.Background())
	fitsDone := make(chan struct{})
	go func() { d.bench.Run(fitCtx, runtime.GOMAXPROCS(0)); close(fitsDone) }()
	var stopping atomic.Bool
	analysed := make(chan struct{})
	go func() { d.analyse(queue, mark, &stopping); close(analysed) }()
	histCtx, stopHistory := context.WithCancel(context.Background())
	histDone := make(chan struct{})
	go func() { d.rec.maintain(histCtx, d.bench, d.replay.done()); close(histDone) }()

	select {
	case <-ctx.Done():
	case err = <-httpErr:
		err = fmt.Errorf("http server on %s: %w", d.Addr(), err)
	}
	stopSources()
	<-acquired
	stopping.Store(true) // the rest of the queue is only cleaned and recorded, not fitted
	<-analysed
	stopFits()
	<-fitsDone // a fit under way finishes (tens of milliseconds)
	stopHistory()
	<-histDone
	shutCtx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	if serr := d.srv.Shutdown(shutCtx); serr != nil && err == nil {
		err = fmt.Errorf("http shutdown: %w", serr)
	}
	d.ln.Close()  // Serve may not have taken the listener yet; a reload rebinds the address
	d.rec.close() // last: everything received so far is committed
	d.log.Info("stopped")
	return err
}

// acquire screens each reading, journals it and passes it on to analysis without
// ever waiting for it: a full analysis queue drops the reading from the forecasts
// only (it is in the journal) and counts it. Each reading's time is first truncated to
// the journal's resolution (journal.Tick), so that the fits, segment starts, forecasts
// and acknowledgements made live are those a restart rebuilds from the journal.
func (d *daemon) acquire(readings <-chan daq.Reading, queue chan<- daq.Reading) {
	for r := range readings {
		r.Time = journal.Truncate(r.Time)
		r = d.clock.Check(d.cleaner.Screen(r), time.Now())
		d.rec.j.Append(r)
		select {
		case queue <- r:
		default:
			d.drops.add(dropAnalysis)
		}
	}
}

// analyse replays the journal into the trackers, then cleans each queued reading and
// routes it. Once stopping is set it no longer feeds the trackers, so a shutdown does
// not wait for fits. At the end it flushes the readings the cleaner still holds.
func (d *daemon) analyse(queue <-chan daq.Reading, mark int64, stopping *atomic.Bool) {
	d.replay.run(func() (int, error) { return d.rec.resume(d.bench, d.latest, mark, stopping.Load) })
	for r := range queue {
		for _, c := range d.cleaner.Apply(r) {
			d.route(c, !stopping.Load())
		}
	}
	for _, c := range d.cleaner.Flush() {
		d.route(c, false)
	}
}

// route records the cleaner's verdict on one reading when it changed its status, shows
// it, offers it to the placement watcher and, when valid and fit is set, to the bench.
// A fault reading is kept in the record but never reaches a fit.
func (d *daemon) route(r daq.Reading, fit bool) {
	if r.Status == daq.StatusSpike || r.Status == daq.StatusStuck {
		d.rec.j.Restatus(r) // journaled as ok a few readings ago
	}
	d.rec.observe(r)
	d.latest.Record(r)
	if fit && r.OK() {
		d.bench.Observe(r.Channel, r.Time, r.Celsius)
	}
}
