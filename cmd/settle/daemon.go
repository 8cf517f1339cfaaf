package main

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"sync"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/clean"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/predict"
)

// daemon wires acquisition, cleaning, the journal, tracking and the HTTP endpoints
// together. It holds no logic of its own beyond moving each reading through them.
type daemon struct {
	cfg     *config.Config
	log     *slog.Logger
	sources []daq.Source
	cleaner *clean.Cleaner
	rec     *recorder
	bench   *predict.Bench
	latest  *exporter.Latest
	ln      net.Listener
	srv     *exporter.Server
}

// newDaemon builds every source and the bench from cfg and binds the listen address, so
// that configuration and port-in-use errors surface before anything starts running.
func newDaemon(cfg *config.Config, log *slog.Logger) (*daemon, error) {
	d := &daemon{cfg: cfg, log: log, latest: exporter.NewLatest()}
	specs, err := predict.SpecsFromConfig(cfg.Channels)
	if err != nil {
		return nil, err
	}
	// At most one fit per channel per wall-clock second: a time-lapse demo or a fast
	// replay must not spend the CPU on fits (the maintenance loop fits what is left).
	d.bench = predict.NewBench(specs, predict.TrackerOptions{MinFitGap: time.Second})
	d.cleaner = clean.New(cfg.Loggers)
	for _, lc := range cfg.Loggers {
		src, err := daq.NewSource(lc, log.With("logger", lc.Name))
		if err != nil {
			return nil, err
		}
		d.sources = append(d.sources, src)
	}
	if d.rec, err = openRecorder(cfg, specs, log); err != nil {
		return nil, err
	}
	state := exporter.State{Bench: d.bench, Latest: d.latest, Ports: d.portStats}
	reg := exporter.NewRegistry(state)
	reg.MustRegister(exporter.NewJournalCollector(d.rec.j.Health))
	d.srv = exporter.NewServer(exporter.NewHandler(state, reg, exporter.Options{
		Runs: d.rec.runsAPI(d.bench, cfg.HTTP.Token), Token: cfg.HTTP.Token, Display: cfg.Display, Webhooks: cfg.Notify.Webhooks, Log: log,
	}), exporter.ServerOptions{TLSCert: cfg.HTTP.TLSCert, TLSKey: cfg.HTTP.TLSKey})
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

// Run serves until ctx ends, then stops the sources, drains the readings already
// received and shuts the HTTP server down with a timeout.
func (d *daemon) Run(ctx context.Context) error {
	d.rec.resume(d.bench, d.latest)
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

	consumed := make(chan struct{})
	go func() { d.consume(readings); close(consumed) }()
	histCtx, stopHistory := context.WithCancel(context.Background())
	histDone := make(chan struct{})
	go func() { d.rec.maintain(histCtx, d.bench); close(histDone) }()

	var err error
	select {
	case <-ctx.Done():
	case err = <-httpErr:
		err = fmt.Errorf("http server on %s: %w", d.Addr(), err)
	}
	stopSources()
	<-consumed
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

// consume cleans each reading, then records it, shows it and, when valid, fits it. At the
// end it flushes the readings the cleaner still holds.
func (d *daemon) consume(readings <-chan daq.Reading) {
	for r := range readings {
		for _, c := range d.cleaner.Apply(r) {
			d.route(c)
		}
	}
	for _, c := range d.cleaner.Flush() {
		d.route(c)
	}
}

// route sends one cleaned reading to the journal, the latest-reading table and, when
// valid, the bench. A fault reading is kept in the record but never reaches a fit.
func (d *daemon) route(r daq.Reading) {
	d.rec.observe(r)
	d.latest.Record(r)
	if r.OK() {
		d.bench.Observe(r.Channel, r.Time, r.Celsius)
	}
}
