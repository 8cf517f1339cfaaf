package exporter

import (
	"bytes"
	"log/slog"
	"net/http/httptest"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/prometheus/client_golang/prometheus"
	dto "github.com/prometheus/client_model/go"
	"github.com/prometheus/common/expfmt"
	"github.com/prometheus/common/model"

	"github.com/settle-lab/settle/daq/journal"
)

var allParts = []string{PartAcquisition, PartEvents, PartForecasts, PartJournal, PartNotifications}

// scrapeHandler scrapes h's /metrics as Prometheus would and returns the families by name.
func scrapeHandler(t *testing.T, h *Handler) map[string]*dto.MetricFamily {
	t.Helper()
	w := httptest.NewRecorder()
	h.ServeHTTP(w, httptest.NewRequest("GET", "/metrics", nil))
	if w.Code != 200 {
		t.Fatalf("/metrics: %d %s", w.Code, w.Body)
	}
	p := expfmt.NewTextParser(model.LegacyValidation)
	fams, err := p.TextToMetricFamilies(w.Body)
	if err != nil {
		t.Fatalf("/metrics is not valid exposition: %v", err)
	}
	return fams
}

// partValue is the value of the scrape series name{collector=part}; false when absent.
func partValue(fams map[string]*dto.MetricFamily, name, part string) (float64, bool) {
	for _, m := range fams[name].GetMetric() {
		if m.GetLabel()[0].GetValue() == part {
			return m.GetGauge().GetValue(), true
		}
	}
	return 0, false
}

// partReg is the registry of the named part.
func partReg(t *testing.T, r *Registry, name string) *prometheus.Registry {
	t.Helper()
	for _, p := range r.parts {
		if p.name == name {
			return p.reg
		}
	}
	t.Fatalf("no part %s", name)
	return nil
}

// openJournal opens a real journal in a temporary folder, closed when the test ends.
func openJournal(t *testing.T) *journal.Journal {
	t.Helper()
	j, err := journal.Open(t.TempDir(), journal.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { j.Close() })
	return j
}

// The daemon's wiring (registry, handler with its notifier and event stream, journal
// collector) scraped through the real /metrics route: every part is reported with
// its duration and success, each collector sits in the part that owns its names, and
// the runtime's families are served beside settle's.
func TestRegistryReportsEveryPart(t *testing.T) {
	s := testState()
	reg := NewRegistry(s)
	h := NewHandler(s, reg, Options{Log: quiet})
	reg.MustRegister(NewJournalCollector(openJournal(t).Health))
	fams := scrapeHandler(t, h)
	for _, p := range allParts {
		if v, ok := partValue(fams, "settle_scrape_collector_success", p); !ok || v != 1 {
			t.Errorf("settle_scrape_collector_success{collector=%q} = %v (present %v), want 1", p, v, ok)
		}
		if v, ok := partValue(fams, "settle_scrape_collector_duration_seconds", p); !ok || v < 0 || v > 60 {
			t.Errorf("settle_scrape_collector_duration_seconds{collector=%q} = %v (present %v), want a time in seconds", p, v, ok)
		}
	}
	for _, n := range []string{"go_goroutines", "process_cpu_seconds_total", "settle_temperature_celsius",
		"settle_port_up", "settle_journal_writable", "settle_journal_size_bytes", "settle_event_stream_dropped_total"} {
		if fams[n] == nil {
			t.Errorf("%s missing from /metrics", n)
		}
	}
	// The notifier's and the event stream's counters were registered by NewHandler: a
	// second collector of the same name is refused by their part's registry, for the
	// name it already holds.
	for name, part := range map[string]string{"settle_notify_sent_total": PartNotifications,
		"settle_event_stream_dropped_total": PartEvents, "settle_journal_writable": PartJournal} {
		dup := prometheus.NewCounterVec(prometheus.CounterOpts{Name: name, Help: "a second one"}, []string{"x"})
		if err := partReg(t, reg, part).Register(dup); err == nil || !strings.Contains(err.Error(), "same fully-qualified name") {
			t.Errorf("%s is not registered in the %s part (registering it again: %v)", name, part, err)
		}
	}
}

// A part that fails is reported with success 0 and its error is logged once; the rest
// of the scrape is served. The failure is real: the journal's file is deleted under
// it, so its size cannot be read. A file back at its path recovers the part.
func TestFailingPartLeavesTheRestOfTheScrape(t *testing.T) {
	s := testState()
	reg := NewRegistry(s)
	var logged bytes.Buffer
	reg.Log = slog.New(slog.NewTextHandler(&logged, nil))
	h := NewHandler(s, reg, Options{Log: quiet})
	j := openJournal(t)
	reg.MustRegister(NewJournalCollector(j.Health))
	if err := os.Remove(j.Path()); err != nil {
		t.Fatal(err)
	}
	for range 2 {
		fams := scrapeHandler(t, h)
		if v, _ := partValue(fams, "settle_scrape_collector_success", PartJournal); v != 0 {
			t.Errorf("journal part success = %v with its file deleted, want 0", v)
		}
		for _, p := range []string{PartAcquisition, PartEvents, PartForecasts, PartNotifications} {
			if v, _ := partValue(fams, "settle_scrape_collector_success", p); v != 1 {
				t.Errorf("%s part success = %v beside a failing journal part, want 1", p, v)
			}
		}
		if fams["settle_journal_size_bytes"] != nil {
			t.Error("settle_journal_size_bytes served although the file cannot be read")
		}
		for _, n := range []string{"settle_journal_writable", "settle_temperature_celsius", "settle_port_up", "go_goroutines"} {
			if fams[n] == nil {
				t.Errorf("%s missing beside a failing journal part", n)
			}
		}
	}
	if n := strings.Count(logged.String(), "a part of the scrape fails"); n != 1 || !strings.Contains(logged.String(), journal.FileName) {
		t.Errorf("failure logged %d times (want once, naming the file): %s", n, logged.String())
	}
	if err := os.WriteFile(j.Path(), []byte("x"), 0o600); err != nil {
		t.Fatal(err)
	}
	fams := scrapeHandler(t, h)
	if v, _ := partValue(fams, "settle_scrape_collector_success", PartJournal); v != 1 {
		t.Errorf("journal part success = %v once a file is back, want 1", v)
	}
	if !strings.Contains(logged.String(), "recovered") {
		t.Errorf("recovery not logged: %s", logged.String())
	}
}

// The application's registry holds settle's metrics only; the Go runtime's, the
// process's and promhttp's own are in the runtime registry.
func TestRuntimeMetricsInARegistryOfTheirOwn(t *testing.T) {
	s := testState()
	reg := NewRegistry(s)
	h := NewHandler(s, reg, Options{Log: quiet})
	reg.MustRegister(NewConfigReloads(t0))
	_ = scrapeHandler(t, h) // promhttp registers its error counter on its first use at the latest
	var settle []string
	for _, p := range reg.parts {
		fams, err := p.gather()
		if err != nil {
			t.Fatal(err)
		}
		settle = append(settle, names(fams)...)
	}
	app, err := reg.app.Gather()
	if err != nil {
		t.Fatal(err)
	}
	settle = append(settle, names(app)...)
	for _, n := range settle {
		if !strings.HasPrefix(n, "settle_") {
			t.Errorf("%s is in the application's registry", n)
		}
	}
	if !slices.Contains(settle, "settle_config_last_reload_successful") {
		t.Errorf("the configuration reloads are not with settle's metrics: %v", settle)
	}
	rt, err := reg.runtime.Gather()
	if err != nil {
		t.Fatal(err)
	}
	rtNames := names(rt)
	for _, n := range rtNames {
		if strings.HasPrefix(n, "settle_") {
			t.Errorf("%s is in the runtime registry", n)
		}
	}
	for _, n := range []string{"go_goroutines", "process_open_fds", "promhttp_metric_handler_errors_total"} {
		if !slices.Contains(rtNames, n) {
			t.Errorf("%s missing from the runtime registry", n)
		}
	}
}

func names(fams []*dto.MetricFamily) []string {
	var out []string
	for _, mf := range fams {
		out = append(out, mf.GetName())
	}
	return out
}

// A name is at home in one place: reusing a runtime or scrape name is refused, and so
// is a collector whose metrics belong to two parts.
func TestRegistryPlacesCollectorsByName(t *testing.T) {
	reg := NewRegistry(testState())
	for _, name := range []string{"go_goroutines", "settle_scrape_collector_success", "settle_port_up"} {
		if err := reg.Register(prometheus.NewGauge(prometheus.GaugeOpts{Name: name, Help: "a clash"})); err == nil {
			t.Errorf("a second %s was registered", name)
		}
	}
	two := descsOnly{prometheus.NewDesc("settle_journal_x", "x", nil, nil), prometheus.NewDesc("settle_notify_y", "y", nil, nil)}
	if err := reg.Register(two); err == nil || !strings.Contains(err.Error(), "settle_notify_y") {
		t.Errorf("a collector spanning the journal and notifications parts: %v, want an error naming both", err)
	}
	g := prometheus.NewGauge(prometheus.GaugeOpts{Name: "settle_journal_test", Help: "test"})
	reg.MustRegister(g)
	if !reg.Unregister(g) || reg.Unregister(g) {
		t.Error("Unregister does not find the collector where Register put it, exactly once")
	}
}

// Every family of the channels' collector is owned by the part that gathers it.
func TestChannelFamiliesBelongToTheirParts(t *testing.T) {
	c := NewCollector(testState())
	seen := map[string]bool{}
	for part, fams := range map[string][]*dto.MetricFamily{
		PartAcquisition: c.gatherAcquisition(), PartForecasts: c.gatherForecasts()} {
		for _, mf := range fams {
			seen[mf.GetName()] = true
			if got := partOf(mf.GetName()); got != part {
				t.Errorf("%s is gathered by the %s part but owned by %q", mf.GetName(), part, got)
			}
		}
	}
	for _, f := range c.fams {
		if p := partOf(f.name); p != PartAcquisition && p != PartForecasts {
			t.Errorf("family %s is owned by %q, want acquisition or forecasts", f.name, p)
		}
	}
	if len(seen) < 20 {
		t.Errorf("the test state gathers only %d families: too few to check ownership", len(seen))
	}
}

// descName reads the name back from a descriptor, help text with quotes and all (the
// client library has no accessor: this guards the String format it relies on).
func TestDescName(t *testing.T) {
	d := prometheus.NewDesc("settle_journal_size_bytes", `help with "quotes", a } and {fqName: "x"}`,
		[]string{"a"}, prometheus.Labels{"b": "c"})
	if got := descName(d); got != "settle_journal_size_bytes" {
		t.Errorf("descName = %q", got)
	}
}

// The journal's size is its file plus its write-ahead log, as listed in its folder
// (the -shm index is not data and is left out).
func TestJournalSize(t *testing.T) {
	j := openJournal(t)
	if err := j.Flush(); err != nil {
		t.Fatal(err)
	}
	c := NewJournalCollector(j.Health)
	reg := prometheus.NewPedanticRegistry()
	reg.MustRegister(c)
	fams, err := reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	var got float64
	for _, mf := range fams {
		if mf.GetName() == "settle_journal_size_bytes" {
			got = mf.GetMetric()[0].GetGauge().GetValue()
		}
	}
	entries, err := os.ReadDir(filepath.Dir(j.Path()))
	if err != nil {
		t.Fatal(err)
	}
	var want int64
	for _, e := range entries {
		if e.Name() == journal.FileName || e.Name() == journal.FileName+"-wal" {
			fi, err := e.Info()
			if err != nil {
				t.Fatal(err)
			}
			want += fi.Size()
		}
	}
	if want == 0 || got != float64(want) {
		t.Errorf("settle_journal_size_bytes = %v, want %d (the folder's listing)", got, want)
	}
}
