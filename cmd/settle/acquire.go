package main

import (
	"log/slog"
	"sync"
	"sync/atomic"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"github.com/settle-lab/settle/predict"
)

// The causes of settle_readings_dropped_total.
const (
	// dropAnalysis: the reading is in the journal but never reached cleaning, the
	// live view or the fits, because analysis was too far behind.
	dropAnalysis = "analysis_queue"
	// dropJournal: the journal's in-memory queue was full during a long disk outage;
	// the reading is lost (also settle_journal_dropped_readings_total; the journal logs it).
	dropJournal = "journal_queue"
)

// dropCounter counts readings dropped on the daemon's path, by cause, logs the first
// drop of each cause, and exports settle_readings_dropped_total{cause}, with the
// journal's own drops (a disk outage longer than its queue) as cause journal_queue.
type dropCounter struct {
	log     *slog.Logger
	journal func() uint64 // the journal's dropped readings; nil until set
	mu      sync.Mutex
	counts  map[string]uint64
	desc    *prometheus.Desc
}

func newDropCounter(log *slog.Logger) *dropCounter {
	return &dropCounter{log: log, counts: map[string]uint64{dropAnalysis: 0},
		desc: prometheus.NewDesc("settle_readings_dropped_total",
			"Readings dropped on the daemon's path, by cause (analysis_queue: in the journal but not shown or fitted; journal_queue: lost in a long disk outage).",
			[]string{"cause"}, nil)}
}

func (c *dropCounter) add(cause string) {
	c.mu.Lock()
	c.counts[cause]++
	first := c.counts[cause] == 1
	c.mu.Unlock()
	if first {
		c.log.Warn("readings dropped (logged once per cause; see settle_readings_dropped_total)", "cause", cause)
	}
}

// count returns the readings dropped for cause.
func (c *dropCounter) count(cause string) uint64 {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.counts[cause]
}

// Describe implements prometheus.Collector.
func (c *dropCounter) Describe(ch chan<- *prometheus.Desc) { ch <- c.desc }

// Collect implements prometheus.Collector.
func (c *dropCounter) Collect(ch chan<- prometheus.Metric) {
	c.mu.Lock()
	defer c.mu.Unlock()
	for cause, n := range c.counts {
		ch <- prometheus.MustNewConstMetric(c.desc, prometheus.CounterValue, float64(n), cause)
	}
	if c.journal != nil {
		ch <- prometheus.MustNewConstMetric(c.desc, prometheus.CounterValue, float64(c.journal()), dropJournal)
	}
}

// replayState tracks the background replay of the journal at start-up.
type replayState struct {
	once     sync.Once
	ch       chan struct{}
	finished atomic.Bool
	readings atomic.Int64
	took     atomic.Int64 // nanoseconds
}

// done returns a channel closed when the replay has finished.
func (s *replayState) done() <-chan struct{} { return s.c() }

func (s *replayState) c() chan struct{} {
	s.once.Do(func() { s.ch = make(chan struct{}) })
	return s.ch
}

// run runs fn (the replay), records its outcome and closes done.
func (s *replayState) run(fn func() (int, error)) {
	start := time.Now()
	n, _ := fn() // fn logs its own errors
	s.readings.Store(int64(n))
	s.took.Store(int64(time.Since(start)))
	s.finished.Store(true)
	close(s.c())
}

// health is the replay's part of /healthz.
func (s *replayState) health() map[string]any {
	done := s.finished.Load()
	out := map[string]any{"replay_done": done}
	if done {
		out["replayed_readings"] = s.readings.Load()
		out["replay_seconds"] = time.Duration(s.took.Load()).Seconds()
	}
	return out
}

// fitCollector exports the bench's fit counters: settle_fit_runs_total and
// settle_fit_seconds_total (see predict.Bench.FitStats), what the schedule costs.
type fitCollector struct {
	bench      *predict.Bench
	runs, secs *prometheus.Desc
}

func newFitCollector(b *predict.Bench) *fitCollector {
	return &fitCollector{bench: b,
		runs: prometheus.NewDesc("settle_fit_runs_total", "Model fits run on every channel since start.", nil, nil),
		secs: prometheus.NewDesc("settle_fit_seconds_total", "Time the fits took in all (wall-clock seconds, summed over the fit workers).", nil, nil)}
}

// Describe implements prometheus.Collector.
func (c *fitCollector) Describe(ch chan<- *prometheus.Desc) { ch <- c.runs; ch <- c.secs }

// Collect implements prometheus.Collector.
func (c *fitCollector) Collect(ch chan<- prometheus.Metric) {
	n, took := c.bench.FitStats()
	ch <- prometheus.MustNewConstMetric(c.runs, prometheus.CounterValue, float64(n))
	ch <- prometheus.MustNewConstMetric(c.secs, prometheus.CounterValue, took.Seconds())
}
