package exporter

import (
	"math"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict"
)

// Bench is what the exporter needs from predict: copies of every channel's state.
type Bench interface {
	Snapshot() []predict.ChannelState
}

// State is everything the exporter reads: forecasts, latest readings and port counters.
// Each field may be nil (nothing of that kind is exported).
type State struct {
	// Bench gives the channels' forecasts.
	Bench Bench
	// Latest gives the newest reading and fault counts per channel.
	Latest *Latest
	// Ports returns the counters of every open logger.
	Ports func() []daq.PortStats
	// StaleAfter is the shortest silence after which a channel is reported stale
	// (0: DefaultStaleAfter).
	StaleAfter time.Duration
	// LoggerOf names the logger that reads each channel (config), so a channel that
	// has never had a reading still shows its logger's lost port; nil: unknown.
	LoggerOf map[string]string
	// Acks holds the acknowledgements of ready specimens; nil: none are kept and the
	// acknowledge endpoint answers 404.
	Acks *Acks
}

// Collector is a prometheus.Collector that builds every settle metric from State at
// scrape time. Descriptors are built once; values are made fresh on each scrape.
type Collector struct {
	state State
	d     descs
}

type descs struct {
	temp, readingTime, fault, faults                        *prometheus.Desc
	eta, etaEarliest, etaLatest, due, reached, info, target *prometheus.Desc
	empty, chInfo                                           *prometheus.Desc
	tau, rmse, biot, valid, fitInfo, fitPoints              *prometheus.Desc
	portUp, reconnects, readErrs, parseErrs, lastRead       *prometheus.Desc
}

// NewCollector returns a collector over s.
func NewCollector(s State) *Collector {
	ch, tg, lg := []string{"channel"}, []string{"channel", "target"}, []string{"logger"}
	d := func(name, help string, labels ...string) *prometheus.Desc {
		return prometheus.NewDesc("settle_"+name, help, labels, nil)
	}
	return &Collector{state: s, d: descs{
		temp:        d("temperature_celsius", "Latest valid temperature of the channel.", ch...),
		readingTime: d("reading_timestamp_seconds", "Unix time of the channel's latest reading, valid or not.", ch...),
		fault:       d("channel_fault", "1 while the channel's latest reading is a fault of this status.", "channel", "status"),
		faults:      d("channel_faults_total", "Fault readings received on the channel, by status.", "channel", "status"),
		eta:         d("target_eta_timestamp_seconds", "Predicted Unix time at which the channel reaches the target (an estimate).", tg...),
		etaEarliest: d("target_eta_earliest_timestamp_seconds", "Lower end of the ~90 % interval of the predicted crossing.", tg...),
		etaLatest:   d("target_eta_latest_timestamp_seconds", "Upper end of the ~90 % interval of the predicted crossing.", tg...),
		due:         d("target_due_timestamp_seconds", "Unix time to plan with: for a handling target the late end of the ~90 % interval (below the target by then with high confidence), else the predicted crossing.", tg...),
		empty:       d("channel_empty", "1 while a specimen position holds no specimen (its targets are not forecast).", ch...),
		chInfo:      d("channel_info", "Always 1; role is position (a specimen position) or ambient (the room's air, never forecast).", "channel", "role"),
		reached:     d("target_reached", "1 once the channel has reached the target in the current segment.", tg...),
		info:        d("target_info", "Always 1; kind is handling, temperature or settle.", "channel", "target", "kind"),
		target:      d("target_celsius", "Resolved target temperature.", tg...),
		tau:         d("fit_time_constant_seconds", "Fitted time constant of the channel's model.", ch...),
		rmse:        d("fit_rmse_celsius", "Root-mean-square residual of the channel's fit.", ch...),
		biot:        d("fit_biot", "Biot number of the channel's specimen, where known.", ch...),
		valid:       d("fit_valid", "1 when the model is used within its validity range.", ch...),
		fitInfo:     d("fit_info", "Always 1; names the model fitted to the channel.", "channel", "model"),
		fitPoints:   d("fit_points", "Readings used by the channel's latest fit.", ch...),
		portUp:      d("port_up", "1 while the logger's serial port is open and readable.", lg...),
		reconnects:  d("port_reconnects_total", "Times the logger's port was reopened after a failure.", lg...),
		readErrs:    d("port_read_errors_total", "Read errors on the logger's port.", lg...),
		parseErrs:   d("parse_errors_total", "Lines from the logger that could not be parsed.", lg...),
		lastRead:    d("last_reading_timestamp_seconds", "Unix time of the logger's latest reading.", lg...),
	}}
}

// Describe sends every descriptor.
func (c *Collector) Describe(out chan<- *prometheus.Desc) {
	for _, d := range []*prometheus.Desc{c.d.temp, c.d.readingTime, c.d.fault, c.d.faults,
		c.d.eta, c.d.etaEarliest, c.d.etaLatest, c.d.due, c.d.empty, c.d.chInfo, c.d.reached, c.d.info, c.d.target,
		c.d.tau, c.d.rmse, c.d.biot, c.d.valid, c.d.fitInfo, c.d.fitPoints,
		c.d.portUp, c.d.reconnects, c.d.readErrs, c.d.parseErrs, c.d.lastRead} {
		out <- d
	}
}

// Collect snapshots State and sends fresh metrics.
func (c *Collector) Collect(out chan<- prometheus.Metric) {
	gauge := func(d *prometheus.Desc, v float64, labels ...string) {
		out <- prometheus.MustNewConstMetric(d, prometheus.GaugeValue, v, labels...)
	}
	counter := func(d *prometheus.Desc, v float64, labels ...string) {
		out <- prometheus.MustNewConstMetric(d, prometheus.CounterValue, v, labels...)
	}
	if c.state.Latest != nil {
		c.collectLatest(gauge, counter)
	}
	if c.state.Bench != nil {
		for _, ch := range c.state.Bench.Snapshot() {
			c.collectChannel(ch, gauge)
		}
	}
	if c.state.Ports != nil {
		for _, p := range c.state.Ports() {
			gauge(c.d.portUp, boolFloat(p.Up), p.Logger)
			counter(c.d.reconnects, float64(p.Reconnects), p.Logger)
			counter(c.d.readErrs, float64(p.ReadErrors), p.Logger)
			counter(c.d.parseErrs, float64(p.ParseErrors), p.Logger)
			if !p.LastReading.IsZero() {
				gauge(c.d.lastRead, unixSeconds(p.LastReading), p.Logger)
			}
		}
	}
}

type emit func(d *prometheus.Desc, v float64, labels ...string)

func (c *Collector) collectLatest(gauge, counter emit) {
	c.state.Latest.mu.Lock()
	defer c.state.Latest.mu.Unlock()
	for name, r := range c.state.Latest.readings {
		gauge(c.d.readingTime, unixSeconds(r.Time), name)
		if !r.OK() {
			gauge(c.d.fault, 1, name, r.Status.String())
		}
	}
	for k, n := range c.state.Latest.faults {
		counter(c.d.faults, float64(n), k.channel, k.status.String())
	}
}

func (c *Collector) collectChannel(ch predict.ChannelState, gauge emit) {
	if ch.Readings > 0 {
		gauge(c.d.temp, ch.LastCelsius, ch.Name)
	}
	role := ch.Role
	if role == "" {
		role = predict.RolePosition
	}
	gauge(c.d.chInfo, 1, ch.Name, role)
	f := ch.Forecast
	if f == nil {
		return
	}
	if role == predict.RolePosition {
		gauge(c.d.empty, boolFloat(f.Empty), ch.Name)
	}
	if f.Empty {
		for _, tf := range f.Targets {
			c.collectTarget(ch.Name, tf, gauge)
		}
		return
	}
	gauge(c.d.fitInfo, 1, ch.Name, f.Model)
	gauge(c.d.fitPoints, float64(f.Points), ch.Name)
	gauge(c.d.valid, boolFloat(!f.OutOfRange), ch.Name)
	if f.TimeConstant > 0 {
		gauge(c.d.tau, f.TimeConstant.Seconds(), ch.Name)
	}
	if finite(f.RMSE) {
		gauge(c.d.rmse, f.RMSE, ch.Name)
	}
	if finite(f.Biot) {
		gauge(c.d.biot, f.Biot, ch.Name)
	}
	for _, tf := range f.Targets {
		c.collectTarget(ch.Name, tf, gauge)
	}
}

func (c *Collector) collectTarget(channel string, tf predict.TargetForecast, gauge emit) {
	name := tf.Target.Name
	gauge(c.d.info, 1, channel, name, TargetKind(tf.Target))
	gauge(c.d.reached, boolFloat(tf.State == predict.StateReached), channel, name)
	if finite(tf.Celsius) {
		gauge(c.d.target, tf.Celsius, channel, name)
	}
	if tf.State != predict.StatePredicted && tf.State != predict.StateHolding {
		return
	}
	for _, p := range []struct {
		d *prometheus.Desc
		t time.Time
	}{{c.d.eta, tf.At}, {c.d.etaEarliest, tf.Earliest}, {c.d.etaLatest, tf.Latest}, {c.d.due, tf.Due()}} {
		if !p.t.IsZero() {
			gauge(p.d, unixSeconds(p.t), channel, name)
		}
	}
}

// TargetKind classifies a target for the settle_target_info metric and the API:
// "handling" (safe to handle), "settle" (a band around the settling temperature) or
// "temperature" (a fixed temperature).
func TargetKind(t predict.Target) string { return t.Kind() }

func boolFloat(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
