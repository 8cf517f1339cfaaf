package exporter

import (
	"errors"
	"fmt"
	"log/slog"
	"slices"
	"strconv"
	"strings"
	"sync/atomic"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	dto "github.com/prometheus/client_model/go"
)

// The parts of a scrape: each is gathered and timed on its own, and reported in
// settle_scrape_collector_duration_seconds and settle_scrape_collector_success with
// its name as the collector label.
const (
	// PartAcquisition: the channels' latest reading times and faults, the loggers'
	// ports and the readings dropped on the daemon's path.
	PartAcquisition = "acquisition"
	// PartForecasts: the channels' temperatures, roles, fits and targets.
	PartForecasts = "forecasts"
	// PartJournal: the journal's health and size.
	PartJournal = "journal"
	// PartNotifications: the webhooks' delivery counters.
	PartNotifications = "notifications"
	// PartEvents: the event stream's dropped and refused clients.
	PartEvents = "events"
)

// owners names the metrics each part exports, as exact names or name prefixes (ending
// in _). A collector registered with a Registry joins the part that owns its metrics'
// names.
var owners = []struct {
	part  string
	names []string
}{
	{PartAcquisition, []string{"settle_reading_timestamp_seconds", "settle_channel_fault", "settle_channel_faults_total",
		"settle_port_", "settle_parse_errors_total", "settle_last_reading_timestamp_seconds", "settle_readings_dropped_total"}},
	{PartEvents, []string{"settle_event_stream_"}},
	{PartForecasts, []string{"settle_temperature_celsius", "settle_channel_empty", "settle_channel_info", "settle_target_", "settle_fit_"}},
	{PartJournal, []string{"settle_journal_"}},
	{PartNotifications, []string{"settle_notify_"}},
}

// partOf is the part that owns the metric name, or "" when none does.
func partOf(name string) string {
	for _, o := range owners {
		for _, n := range o.names {
			if name == n || strings.HasSuffix(n, "_") && strings.HasPrefix(name, n) {
				return o.part
			}
		}
	}
	return ""
}

// Registry is the daemon's metrics, served on /metrics. It holds three kinds:
//
//   - the parts (acquisition, forecasts, journal, notifications, events): each gathered
//     and timed on its own; a part that fails (an error from one of its collectors) is
//     reported with settle_scrape_collector_success{collector="<part>"} 0, its error is
//     logged, and the rest of the scrape is served as usual;
//   - settle's other metrics (the configuration reloads, the scrape's own series);
//   - in a registry of their own, the Go runtime and process collectors (and promhttp's
//     error counter): never mixed with settle's.
//
// Register places a collector by its metrics' names: in the part that owns them (see
// owners), else with settle's other metrics when they start with settle_, else with
// the runtime's. A name is at home in one place only, so a collector that reuses a
// name already there is refused, and no family is served twice. So the notifier's
// counters, registered through NewHandler's Metrics, join the notifications part by
// their settle_notify_ names, whichever package the notifier lives in.
//
// The channels' series (the Collector's) skip a registry's per-metric work (building,
// checking and sorting every series on every scrape): the collector keeps each series
// built and rebuilds only what changed. Their parts still know their descriptors, so
// registering a collector that reuses one of their names fails.
type Registry struct {
	// Log receives a part's failure when it starts failing and its recovery (nil:
	// slog.Default()).
	Log *slog.Logger

	settle  *Collector
	parts   []*part
	app     *prometheus.Registry // settle's metrics outside the parts
	runtime *prometheus.Registry // Go runtime, process and promhttp
}

// part is one part of a scrape: the collectors registered with it and, for the
// channels' parts, the Collector's series.
type part struct {
	name    string
	reg     *prometheus.Registry
	cached  func() []*dto.MetricFamily // nil: none
	failing atomic.Bool                // the last gather failed (to log changes only)
}

// NewRegistry returns the registry over s with the Go runtime and process collectors.
func NewRegistry(s State) *Registry {
	r := &Registry{settle: NewCollector(s), app: prometheus.NewRegistry(), runtime: prometheus.NewRegistry()}
	cached := map[string]func() []*dto.MetricFamily{
		PartAcquisition: r.settle.gatherAcquisition, PartForecasts: r.settle.gatherForecasts}
	for _, o := range owners {
		p := &part{name: o.part, reg: prometheus.NewRegistry(), cached: cached[o.part]}
		p.reg.MustRegister(descsOnly(r.settle.descs(o.part)))
		r.parts = append(r.parts, p)
	}
	slices.SortFunc(r.parts, func(a, b *part) int { return strings.Compare(a.name, b.name) }) // the scrape series' order
	r.app.MustRegister(scrapeDescs())
	r.runtime.MustRegister(collectors.NewGoCollector(),
		collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	return r
}

// descs returns the descriptors of the collector's families that part owns.
func (c *Collector) descs(part string) descsOnly {
	var out descsOnly
	for _, f := range c.fams {
		if partOf(f.name) == part {
			out = append(out, f.desc)
		}
	}
	return out
}

// Register adds c where its metrics' names are at home (see Registry).
func (r *Registry) Register(c prometheus.Collector) error {
	home, err := r.home(c)
	if err != nil {
		return err
	}
	return home.Register(c)
}

// MustRegister registers each collector and panics on the first that fails.
func (r *Registry) MustRegister(cs ...prometheus.Collector) {
	for _, c := range cs {
		if err := r.Register(c); err != nil {
			panic(err)
		}
	}
}

// Unregister removes c from where it was registered; false when it was not.
func (r *Registry) Unregister(c prometheus.Collector) bool {
	home, err := r.home(c)
	return err == nil && home.Unregister(c)
}

// home is the registry where the names of c's metrics are at home; an error when they
// belong to several.
func (r *Registry) home(c prometheus.Collector) (*prometheus.Registry, error) {
	descs := make(chan *prometheus.Desc)
	go func() { c.Describe(descs); close(descs) }()
	var homes []*prometheus.Registry
	var names []string
	for d := range descs {
		name := descName(d)
		h := r.homeOf(name)
		if !slices.Contains(homes, h) {
			homes, names = append(homes, h), append(names, name)
		}
	}
	switch len(homes) {
	case 0:
		return r.app, nil // describes nothing (an unchecked collector): settle's
	case 1:
		return homes[0], nil
	}
	return nil, fmt.Errorf("collector exports metrics of different parts (%s): register them apart", strings.Join(names, ", "))
}

func (r *Registry) homeOf(name string) *prometheus.Registry {
	if p := partOf(name); p != "" {
		for _, pt := range r.parts {
			if pt.name == p {
				return pt.reg
			}
		}
	}
	if strings.HasPrefix(name, "settle_") {
		return r.app
	}
	return r.runtime
}

// descName is the metric name of d. The client library offers no accessor, so it is
// read from d's String (`Desc{fqName: "name", ...}`); "" when it cannot be read,
// which places the collector with the runtime's metrics.
func descName(d *prometheus.Desc) string {
	s, ok := strings.CutPrefix(d.String(), "Desc{fqName: ")
	if !ok {
		return ""
	}
	q, err := strconv.QuotedPrefix(s)
	if err != nil {
		return ""
	}
	name, _ := strconv.Unquote(q)
	return name
}

// Gather returns every family, sorted by name: each part's (timed), settle's other
// metrics, the scrape's own series and the runtime's. A part's error is reported in
// its success series and logged, not returned: the scrape goes on.
func (r *Registry) Gather() ([]*dto.MetricFamily, error) {
	var out []*dto.MetricFamily
	took, ok := make([]float64, len(r.parts)), make([]bool, len(r.parts))
	for i, p := range r.parts {
		start := time.Now()
		fams, err := p.gather()
		took[i], ok[i] = time.Since(start).Seconds(), err == nil
		r.logChange(p, err)
		out = mergeFamilies(out, fams)
	}
	app, appErr := r.app.Gather()
	rt, rtErr := r.runtime.Gather()
	out = mergeFamilies(mergeFamilies(out, app), rt)
	return mergeFamilies(out, scrapeFamilies(r.parts, took, ok)), errors.Join(appErr, rtErr)
}

// gather returns the part's families: its registered collectors' (those that could be
// gathered, when one fails) and the channels' series it keeps.
func (p *part) gather() ([]*dto.MetricFamily, error) {
	fams, err := p.reg.Gather()
	if p.cached != nil {
		fams = mergeFamilies(fams, p.cached())
	}
	return fams, err
}

// logChange logs a part that starts failing, with the error, and one that recovers.
func (r *Registry) logChange(p *part, err error) {
	if p.failing.Swap(err != nil) == (err != nil) {
		return
	}
	log := r.Log
	if log == nil {
		log = slog.Default()
	}
	if err != nil {
		log.Warn("metrics: a part of the scrape fails (its series may be missing; see settle_scrape_collector_success)",
			"collector", p.name, "err", err)
	} else {
		log.Info("metrics: a part of the scrape recovered", "collector", p.name)
	}
}

// The scrape's own series, one of each per part.
const (
	scrapeDuration     = "settle_scrape_collector_duration_seconds"
	scrapeDurationHelp = "Seconds the part of the daemon named by collector took to gather its metrics in this scrape."
	scrapeSuccess      = "settle_scrape_collector_success"
	scrapeSuccessHelp  = "1 when the part of the daemon named by collector gathered its metrics in this scrape, 0 when it failed (the error is logged)."
)

// scrapeDescs describes the scrape's own series, so that no collector can reuse their names.
func scrapeDescs() descsOnly {
	labels := []string{"collector"}
	return descsOnly{prometheus.NewDesc(scrapeDuration, scrapeDurationHelp, labels, nil),
		prometheus.NewDesc(scrapeSuccess, scrapeSuccessHelp, labels, nil)}
}

// scrapeFamilies builds the scrape's series from each part's time taken and success,
// in the parts' order (sorted by name).
func scrapeFamilies(parts []*part, took []float64, ok []bool) []*dto.MetricFamily {
	durs, succ := make([]*dto.Metric, len(parts)), make([]*dto.Metric, len(parts))
	for i, p := range parts {
		l := []*dto.LabelPair{labelPair("collector", p.name)}
		v := boolFloat(ok[i])
		durs[i] = &dto.Metric{Label: l, Gauge: &dto.Gauge{Value: &took[i]}}
		succ[i] = &dto.Metric{Label: l, Gauge: &dto.Gauge{Value: &v}}
	}
	family := func(name, help string, ms []*dto.Metric) *dto.MetricFamily {
		return &dto.MetricFamily{Name: &name, Help: &help, Type: dto.MetricType_GAUGE.Enum(), Metric: ms}
	}
	return []*dto.MetricFamily{family(scrapeDuration, scrapeDurationHelp, durs), family(scrapeSuccess, scrapeSuccessHelp, succ)}
}

// mergeFamilies merges two lists of families, each sorted by name and with names
// distinct between them (a name is at home in one place only: see Registry).
func mergeFamilies(a, b []*dto.MetricFamily) []*dto.MetricFamily {
	out := make([]*dto.MetricFamily, 0, len(a)+len(b))
	for len(a) > 0 && len(b) > 0 {
		if a[0].GetName() < b[0].GetName() {
			out, a = append(out, a[0]), a[1:]
		} else {
			out, b = append(out, b[0]), b[1:]
		}
	}
	return append(append(out, a...), b...)
}

// descsOnly registers descriptors with a registry, and no metrics: the registry then
// refuses another collector that reuses one of their names.
type descsOnly []*prometheus.Desc

func (d descsOnly) Describe(out chan<- *prometheus.Desc) {
	for _, x := range d {
		out <- x
	}
}
func (d descsOnly) Collect(chan<- prometheus.Metric) {}
