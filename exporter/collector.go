package exporter

import (
	"cmp"
	"math"
	"slices"
	"strings"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	dto "github.com/prometheus/client_model/go"

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

// Collector builds every settle metric from State at scrape time. It keeps each
// channel's series as built metrics and rebuilds only those whose value or labels
// changed since the last scrape, so a scrape of a thousand unchanged channels builds
// nothing. Gather serves them without a registry's per-metric checks (the daemon's
// /metrics); as a prometheus.Collector it sends the same metrics through a registry
// (tests, lint).
//
// Its series come from two parts of the daemon, each gathered and timed on its own by
// the Registry: acquisition (State.Latest and State.Ports: reading times, faults, ports)
// and forecasts (State.Bench: temperatures, channel roles, fits, targets). Each part
// keeps its own channels' series.
type Collector struct {
	state State
	fams  [nFamilies]family

	acquisition, forecasts seriesCache
}

// seriesCache is one part's built series, by channel.
type seriesCache struct {
	mu       sync.Mutex
	channels map[string]*channelSeries
	gen      uint64
}

// The metric families, by index into Collector.fams.
const (
	fTemp = iota
	fReadingTime
	fFault
	fFaults
	fETA
	fETAEarliest
	fETALatest
	fDue
	fEmpty
	fChInfo
	fReached
	fTargetInfo
	fTarget
	fTau
	fRMSE
	fBiot
	fValid
	fFitInfo
	fFitPoints
	fPortUp
	fReconnects
	fReadErrs
	fParseErrs
	fLastRead
	nFamilies
)

// family is one metric family: its descriptor and how its label pairs are laid out.
type family struct {
	name, help string
	typ        dto.MetricType
	labels     []string
	byName     []int // indexes into labels in name order (the order of dto label pairs)
	desc       *prometheus.Desc
}

// NewCollector returns a collector over s.
func NewCollector(s State) *Collector {
	c := &Collector{state: s}
	c.acquisition.channels, c.forecasts.channels = map[string]*channelSeries{}, map[string]*channelSeries{}
	ch, tg, lg := []string{"channel"}, []string{"channel", "target"}, []string{"logger"}
	gauge, counter := dto.MetricType_GAUGE, dto.MetricType_COUNTER
	def := func(i int, name string, typ dto.MetricType, help string, labels ...string) {
		f := family{name: "settle_" + name, help: help, typ: typ, labels: labels}
		f.byName = make([]int, len(labels))
		for j := range f.byName {
			f.byName[j] = j
		}
		slices.SortFunc(f.byName, func(a, b int) int { return strings.Compare(labels[a], labels[b]) })
		f.desc = prometheus.NewDesc(f.name, help, labels, nil)
		c.fams[i] = f
	}
	def(fTemp, "temperature_celsius", gauge, "Latest valid temperature of the channel.", ch...)
	def(fReadingTime, "reading_timestamp_seconds", gauge, "Unix time of the channel's latest reading, valid or not.", ch...)
	def(fFault, "channel_fault", gauge, "1 while the channel's latest reading is a fault of this status.", "channel", "status")
	def(fFaults, "channel_faults_total", counter, "Fault readings received on the channel, by status.", "channel", "status")
	def(fETA, "target_eta_timestamp_seconds", gauge, "Predicted Unix time at which the channel reaches the target (an estimate).", tg...)
	def(fETAEarliest, "target_eta_earliest_timestamp_seconds", gauge, "Lower end of the ~90 % interval of the predicted crossing.", tg...)
	def(fETALatest, "target_eta_latest_timestamp_seconds", gauge, "Upper end of the ~90 % interval of the predicted crossing.", tg...)
	def(fDue, "target_due_timestamp_seconds", gauge, "Unix time to plan with: for a handling target the late end of the ~90 % interval (below the target by then with high confidence), else the predicted crossing.", tg...)
	def(fEmpty, "channel_empty", gauge, "1 while a specimen position holds no specimen (its targets are not forecast).", ch...)
	def(fChInfo, "channel_info", gauge, "Always 1; role is position (a specimen position) or ambient (the room's air, never forecast).", "channel", "role")
	def(fReached, "target_reached", gauge, "1 once the channel has reached the target in the current segment.", tg...)
	def(fTargetInfo, "target_info", gauge, "Always 1; kind is handling, temperature or settle.", "channel", "target", "kind")
	def(fTarget, "target_celsius", gauge, "Resolved target temperature.", tg...)
	def(fTau, "fit_time_constant_seconds", gauge, "Fitted time constant of the channel's model.", ch...)
	def(fRMSE, "fit_rmse_celsius", gauge, "Root-mean-square residual of the channel's fit.", ch...)
	def(fBiot, "fit_biot", gauge, "Biot number of the channel's specimen, where known.", ch...)
	def(fValid, "fit_valid", gauge, "1 when the model is used within its validity range.", ch...)
	def(fFitInfo, "fit_info", gauge, "Always 1; names the model fitted to the channel.", "channel", "model")
	def(fFitPoints, "fit_points", gauge, "Readings used by the channel's latest fit.", ch...)
	def(fPortUp, "port_up", gauge, "1 while the logger's serial port is open and readable.", lg...)
	def(fReconnects, "port_reconnects_total", counter, "Times the logger's port was reopened after a failure.", lg...)
	def(fReadErrs, "port_read_errors_total", counter, "Read errors on the logger's port.", lg...)
	def(fParseErrs, "parse_errors_total", counter, "Lines from the logger that could not be parsed.", lg...)
	def(fLastRead, "last_reading_timestamp_seconds", gauge, "Unix time of the logger's latest reading.", lg...)
	return c
}

// Describe sends every descriptor.
func (c *Collector) Describe(out chan<- *prometheus.Desc) {
	for _, f := range c.fams {
		out <- f.desc
	}
}

// Collect sends the metrics of Gather through a registry.
func (c *Collector) Collect(out chan<- prometheus.Metric) {
	descs := make(map[string]*prometheus.Desc, nFamilies)
	for _, f := range c.fams {
		descs[f.name] = f.desc
	}
	for _, mf := range c.Gather() {
		for _, m := range mf.Metric {
			out <- builtMetric{descs[mf.GetName()], m}
		}
	}
}

// builtMetric is a metric built by the collector, sent through Collect.
type builtMetric struct {
	desc *prometheus.Desc
	m    *dto.Metric
}

func (b builtMetric) Desc() *prometheus.Desc { return b.desc }

// Write shares the built label pairs and value: built metrics are never changed.
func (b builtMetric) Write(out *dto.Metric) error {
	out.Label, out.Gauge, out.Counter = b.m.Label, b.m.Gauge, b.m.Counter
	return nil
}

// Gather returns the settle metric families, sorted by name with each family's
// metrics in label order (as a registry would). Series of a channel whose value and
// labels are unchanged since the last call are the same metrics, not rebuilt; the
// returned families are the caller's, the metrics in them are shared and never changed.
func (c *Collector) Gather() []*dto.MetricFamily {
	return mergeFamilies(c.gatherAcquisition(), c.gatherForecasts())
}

// gatherAcquisition returns the acquisition part's families: each channel's latest
// reading time and faults, and each logger's port.
func (c *Collector) gatherAcquisition() []*dto.MetricFamily {
	return c.gather(&c.acquisition, func() {
		if c.state.Latest != nil {
			c.latestSamples()
		}
	}, c.portMetrics)
}

// gatherForecasts returns the forecasts part's families: each channel's temperature,
// role, fit and targets as the bench holds them.
func (c *Collector) gatherForecasts() []*dto.MetricFamily {
	return c.gather(&c.forecasts, func() {
		if c.state.Bench == nil {
			return
		}
		for _, ch := range c.state.Bench.Snapshot() {
			cs := c.forecasts.channel(ch.Name)
			cs.next = c.benchSamples(cs.next, ch)
		}
	}, nil)
}

// gather builds one part's families: collect adds this scrape's samples to sc's
// channels, rebuilt adds series built on every scrape (nil: none). A channel that
// collect did not add to is gone from the state and its series vanish.
func (c *Collector) gather(sc *seriesCache, collect func(), rebuilt func(*[nFamilies][]*dto.Metric)) []*dto.MetricFamily {
	sc.mu.Lock()
	defer sc.mu.Unlock()
	sc.gen++
	collect()
	names := make([]string, 0, len(sc.channels))
	for name, cs := range sc.channels {
		if cs.gen != sc.gen {
			delete(sc.channels, name)
			continue
		}
		cs.update(&c.fams)
		names = append(names, name)
	}
	slices.Sort(names)
	var out [nFamilies][]*dto.Metric
	for _, name := range names {
		cs := sc.channels[name]
		for k, i := range cs.order {
			f := cs.samples[i].fam
			out[f] = append(out[f], cs.metrics[k])
		}
	}
	if rebuilt != nil {
		rebuilt(&out)
	}
	return c.families(&out)
}

// families wraps each non-empty family's metrics, sorted by name. The metrics are in
// label order already: channels by name, each channel's samples by compareSamples
// (TestCachedCollectorMatchesFreshBuild checks the order against a registry's).
func (c *Collector) families(out *[nFamilies][]*dto.Metric) []*dto.MetricFamily {
	mfs := make([]*dto.MetricFamily, 0, nFamilies)
	for i, ms := range out {
		if len(ms) == 0 {
			continue
		}
		f := &c.fams[i]
		mfs = append(mfs, &dto.MetricFamily{Name: &f.name, Help: &f.help, Type: f.typ.Enum(), Metric: ms})
	}
	slices.SortFunc(mfs, func(a, b *dto.MetricFamily) int { return strings.Compare(a.GetName(), b.GetName()) })
	return mfs
}

// channel returns the series of the named channel, marked as present in this scrape.
func (sc *seriesCache) channel(name string) *channelSeries {
	cs := sc.channels[name]
	if cs == nil {
		cs = &channelSeries{first: labelPair("channel", name)}
		sc.channels[name] = cs
	}
	if cs.gen != sc.gen {
		cs.gen, cs.next = sc.gen, cs.next[:0]
	}
	return cs
}

func (c *Collector) latestSamples() {
	l := c.state.Latest
	l.mu.Lock()
	defer l.mu.Unlock()
	for name, r := range l.readings {
		cs := c.acquisition.channel(name)
		cs.next = append(cs.next, sample{fam: fReadingTime, v: unixSeconds(r.Time)})
		if !r.OK() {
			cs.next = append(cs.next, sample{fam: fFault, l1: r.Status.String(), v: 1})
		}
	}
	// In a fixed order: a channel's samples are compared with the last scrape's to
	// decide whether to rebuild its series, and a map's order changes every time.
	keys := make([]faultKey, 0, len(l.faults))
	for k := range l.faults {
		keys = append(keys, k)
	}
	slices.SortFunc(keys, func(a, b faultKey) int {
		return cmp.Or(strings.Compare(a.channel, b.channel), cmp.Compare(a.status, b.status))
	})
	for _, k := range keys {
		cs := c.acquisition.channel(k.channel)
		cs.next = append(cs.next, sample{fam: fFaults, l1: k.status.String(), v: float64(l.faults[k])})
	}
}

// benchSamples appends the series of one channel's forecast state to out.
func (c *Collector) benchSamples(out []sample, ch predict.ChannelState) []sample {
	if ch.Readings > 0 {
		out = append(out, sample{fam: fTemp, v: ch.LastCelsius})
	}
	role := ch.Role
	if role == "" {
		role = predict.RolePosition
	}
	out = append(out, sample{fam: fChInfo, l1: role, v: 1})
	f := ch.Forecast
	if f == nil {
		return out
	}
	if role == predict.RolePosition {
		out = append(out, sample{fam: fEmpty, v: boolFloat(f.Empty)})
	}
	if !f.Empty {
		out = append(out, sample{fam: fFitInfo, l1: f.Model, v: 1},
			sample{fam: fFitPoints, v: float64(f.Points)},
			sample{fam: fValid, v: boolFloat(!f.OutOfRange)})
		if f.TimeConstant > 0 {
			out = append(out, sample{fam: fTau, v: f.TimeConstant.Seconds()})
		}
		if finite(f.RMSE) {
			out = append(out, sample{fam: fRMSE, v: f.RMSE})
		}
		if finite(f.Biot) {
			out = append(out, sample{fam: fBiot, v: f.Biot})
		}
	}
	for _, tf := range f.Targets {
		out = targetSamples(out, tf)
	}
	return out
}

func targetSamples(out []sample, tf predict.TargetForecast) []sample {
	name := tf.Target.Name
	out = append(out, sample{fam: fTargetInfo, l1: name, l2: TargetKind(tf.Target), v: 1},
		sample{fam: fReached, l1: name, v: boolFloat(tf.State == predict.StateReached)})
	if finite(tf.Celsius) {
		out = append(out, sample{fam: fTarget, l1: name, v: tf.Celsius})
	}
	if tf.State != predict.StatePredicted && tf.State != predict.StateHolding {
		return out
	}
	for _, p := range []struct {
		fam int
		t   time.Time
	}{{fETA, tf.At}, {fETAEarliest, tf.Earliest}, {fETALatest, tf.Latest}, {fDue, tf.Due()}} {
		if !p.t.IsZero() {
			out = append(out, sample{fam: p.fam, l1: name, v: unixSeconds(p.t)})
		}
	}
	return out
}

// portMetrics appends each logger's series (a handful: built on every scrape).
func (c *Collector) portMetrics(out *[nFamilies][]*dto.Metric) {
	if c.state.Ports == nil {
		return
	}
	ports := c.state.Ports()
	slices.SortStableFunc(ports, func(a, b daq.PortStats) int { return strings.Compare(a.Logger, b.Logger) })
	for _, p := range ports {
		first := labelPair("logger", p.Logger)
		add := func(fam int, v float64) {
			out[fam] = append(out[fam], c.fams[fam].build(first, sample{fam: fam, v: v}))
		}
		add(fPortUp, boolFloat(p.Up))
		add(fReconnects, float64(p.Reconnects))
		add(fReadErrs, float64(p.ReadErrors))
		add(fParseErrs, float64(p.ParseErrors))
		if !p.LastReading.IsZero() {
			add(fLastRead, unixSeconds(p.LastReading))
		}
	}
}

// sample is one series before it is built: its family, the values of the labels after
// the first (the channel's or logger's), in the family's label order, and its value.
type sample struct {
	fam    int
	l1, l2 string
	v      float64
}

// channelSeries is one channel's built series and the samples they were built from.
type channelSeries struct {
	first   *dto.LabelPair // channel="name", shared by every series of the channel
	gen     uint64         // the scrape that last saw the channel
	next    []sample       // this scrape's samples, being collected
	samples []sample       // the samples behind metrics, as collected
	order   []int          // indexes into samples in exposition order
	metrics []*dto.Metric  // in exposition order
}

// update takes this scrape's samples. When they are the last scrape's series with new
// values (the usual case: a new reading), only the metrics whose value changed are
// rebuilt; when series appeared, vanished or were relabelled, the channel's metrics
// are rebuilt and put in exposition order again.
func (cs *channelSeries) update(fams *[nFamilies]family) {
	if sameSeries(cs.next, cs.samples) {
		for k, i := range cs.order {
			if s := cs.next[i]; math.Float64bits(s.v) != math.Float64bits(cs.samples[i].v) {
				cs.metrics[k] = fams[s.fam].build(cs.first, s)
			}
		}
	} else {
		cs.order = cs.order[:0]
		for i := range cs.next {
			cs.order = append(cs.order, i)
		}
		slices.SortFunc(cs.order, func(a, b int) int { return compareSamples(fams, cs.next[a], cs.next[b]) })
		cs.metrics = make([]*dto.Metric, len(cs.next))
		for k, i := range cs.order {
			cs.metrics[k] = fams[cs.next[i].fam].build(cs.first, cs.next[i])
		}
	}
	cs.samples, cs.next = cs.next, cs.samples
}

// sameSeries reports whether a and b hold the same series (families and labels) in the
// same order, whatever their values.
func sameSeries(a, b []sample) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i].fam != b[i].fam || a[i].l1 != b[i].l1 || a[i].l2 != b[i].l2 {
			return false
		}
	}
	return true
}

// compareSamples orders samples by family, then as the exposition orders a family's
// metrics: by label values in label-name order.
func compareSamples(fams *[nFamilies]family, a, b sample) int {
	if a.fam != b.fam {
		return a.fam - b.fam
	}
	va, vb := [3]string{"", a.l1, a.l2}, [3]string{"", b.l1, b.l2}
	for _, i := range fams[a.fam].byName {
		if c := strings.Compare(va[i], vb[i]); c != 0 {
			return c
		}
	}
	return 0
}

// build makes the metric of s, whose first label pair is first.
func (f *family) build(first *dto.LabelPair, s sample) *dto.Metric {
	vals := [3]string{"", s.l1, s.l2}
	m := &dto.Metric{Label: make([]*dto.LabelPair, len(f.labels))}
	for j, i := range f.byName {
		if i == 0 {
			m.Label[j] = first
		} else {
			m.Label[j] = labelPair(f.labels[i], vals[i])
		}
	}
	v := s.v
	if f.typ == dto.MetricType_COUNTER {
		m.Counter = &dto.Counter{Value: &v}
	} else {
		m.Gauge = &dto.Gauge{Value: &v}
	}
	return m
}

func labelPair(name, value string) *dto.LabelPair {
	return &dto.LabelPair{Name: &name, Value: &value}
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
