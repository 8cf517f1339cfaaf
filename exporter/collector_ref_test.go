package exporter

import (
	"bytes"
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	dto "github.com/prometheus/client_model/go"
	"github.com/prometheus/common/expfmt"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict"
)

// refCollector is the collector as it was before series were kept built: every series
// made fresh with MustNewConstMetric on each scrape, through a registry. The cached
// collector must expose exactly what it exposes, scrape after scrape.
type refCollector struct {
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

func newRefCollector(s State) *refCollector {
	c := NewCollector(s)
	f := func(i int) *prometheus.Desc { return c.fams[i].desc }
	return &refCollector{state: s, d: descs{
		temp: f(fTemp), readingTime: f(fReadingTime), fault: f(fFault), faults: f(fFaults),
		eta: f(fETA), etaEarliest: f(fETAEarliest), etaLatest: f(fETALatest), due: f(fDue),
		empty: f(fEmpty), chInfo: f(fChInfo), reached: f(fReached), info: f(fTargetInfo), target: f(fTarget),
		tau: f(fTau), rmse: f(fRMSE), biot: f(fBiot), valid: f(fValid), fitInfo: f(fFitInfo), fitPoints: f(fFitPoints),
		portUp: f(fPortUp), reconnects: f(fReconnects), readErrs: f(fReadErrs), parseErrs: f(fParseErrs), lastRead: f(fLastRead),
	}}
}

func (c *refCollector) Describe(out chan<- *prometheus.Desc) { NewCollector(c.state).Describe(out) }

// Collect snapshots State and sends fresh metrics.
func (c *refCollector) Collect(out chan<- prometheus.Metric) {
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

func (c *refCollector) collectLatest(gauge, counter emit) {
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

func (c *refCollector) collectChannel(ch predict.ChannelState, gauge emit) {
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

func (c *refCollector) collectTarget(channel string, tf predict.TargetForecast, gauge emit) {
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

// benchFunc is a bench whose snapshot a test can change between scrapes.
type benchFunc func() []predict.ChannelState

func (f benchFunc) Snapshot() []predict.ChannelState { return f() }

func exposition(t *testing.T, families []*dto.MetricFamily, err error) string {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	enc := expfmt.NewEncoder(&buf, expfmt.NewFormat(expfmt.TypeTextPlain))
	for _, mf := range families {
		if err := enc.Encode(mf); err != nil {
			t.Fatal(err)
		}
	}
	return buf.String()
}

// firstDiff is the first line where a and b differ, for a readable failure.
func firstDiff(a, b string) string {
	la, lb := bytes.Split([]byte(a), []byte("\n")), bytes.Split([]byte(b), []byte("\n"))
	for i := range min(len(la), len(lb)) {
		if !bytes.Equal(la[i], lb[i]) {
			return fmt.Sprintf("line %d: cached %q, fresh %q", i+1, la[i], lb[i])
		}
	}
	return fmt.Sprintf("cached has %d lines, fresh %d", len(la), len(lb))
}

// The cached collector's exposition equals the fresh build's (refCollector through a
// pedantic registry) after each of a series of state changes, and a channel whose
// state did not change keeps the very same metrics.
func TestCachedCollectorMatchesFreshBuild(t *testing.T) {
	base := testState()
	fc := *base.Bench.Snapshot()[0].Forecast
	chs := make([]predict.ChannelState, 60)
	latest := NewLatest()
	for i := range chs {
		name := fmt.Sprintf("oven%d-pos%02d", i/10, i%10)
		f := fc
		f.Targets = append([]predict.TargetForecast(nil), fc.Targets...)
		chs[i] = predict.ChannelState{Name: name, LastTime: t0, LastCelsius: 300 - float64(i), Readings: 10 + i, Forecast: &f}
		switch i % 6 {
		case 1:
			chs[i].Forecast = nil // not fitted yet
		case 2:
			chs[i].Role = predict.RoleAmbient
			chs[i].Forecast = nil
		case 3:
			f.Empty = true
		case 4:
			f.Biot, f.TimeConstant, f.OutOfRange = 0.31, 0, true
			f.Targets[0].State = predict.StateReached
		}
		latest.Record(daq.Reading{Channel: name, Time: t0.Add(time.Duration(i) * time.Second), Celsius: chs[i].LastCelsius})
	}
	up := true
	s := State{Bench: benchFunc(func() []predict.ChannelState { return chs }), Latest: latest,
		Ports: func() []daq.PortStats {
			return []daq.PortStats{{Logger: "rack2", Up: up, Reconnects: 1}, {Logger: "rack1", Up: true, LastReading: t0}}
		}}
	cached := NewCollector(s)
	ref := prometheus.NewPedanticRegistry()
	ref.MustRegister(newRefCollector(s))
	steps := []struct {
		name   string
		change func()
	}{
		{"first scrape", func() {}},
		{"nothing changed", func() {}},
		{"new readings on every channel", func() {
			for i := range chs {
				chs[i].LastCelsius -= 0.25
				latest.Record(daq.Reading{Channel: chs[i].Name, Time: t0.Add(time.Minute + time.Duration(i)*time.Second), Celsius: chs[i].LastCelsius})
			}
		}},
		{"a refit moves one crossing and reaches another", func() {
			f := *chs[0].Forecast
			f.Targets = append([]predict.TargetForecast(nil), f.Targets...)
			f.Targets[0].At = f.Targets[0].At.Add(-time.Minute)
			f.Targets[1].State = predict.StateReached
			f.RMSE, f.Model = math.NaN(), "lumped-radiation"
			chs[0].Forecast = &f
		}},
		{"a thermocouple opens and a port goes down", func() {
			latest.Record(daq.Reading{Channel: chs[5].Name, Time: t0.Add(2 * time.Minute), Status: daq.StatusOpen, Raw: "OPEN"})
			up = false
		}},
		{"a target is dropped and a specimen removed", func() {
			f := *chs[6].Forecast
			f.Targets = f.Targets[:1]
			chs[6].Forecast = &f
			chs[9].Forecast.Empty = true
		}},
		{"a channel leaves the bench", func() { chs = chs[1:] }},
		{"the channel recovers", func() {
			latest.Record(daq.Reading{Channel: chs[4].Name, Time: t0.Add(3 * time.Minute), Celsius: 100})
		}},
	}
	var before []*dto.MetricFamily
	for _, st := range steps {
		st.change()
		now := cached.Gather()
		refFams, err := ref.Gather()
		want := exposition(t, refFams, err)
		if got := exposition(t, now, nil); got != want {
			t.Fatalf("%s: cached exposition differs from the fresh build: %s", st.name, firstDiff(got, want))
		}
		if st.name == "nothing changed" && !sameMetrics(before, now) {
			t.Errorf("%s: metrics were rebuilt", st.name)
		}
		before = now
	}
}

// sameMetrics reports whether a and b hold the very same metric values (pointers).
func sameMetrics(a, b []*dto.MetricFamily) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if len(a[i].Metric) != len(b[i].Metric) {
			return false
		}
		for j := range a[i].Metric {
			if a[i].Metric[j] != b[i].Metric[j] && !isPortFamily(a[i].GetName()) {
				return false
			}
		}
	}
	return true
}

func isPortFamily(name string) bool {
	switch name {
	case "settle_port_up", "settle_port_reconnects_total", "settle_port_read_errors_total",
		"settle_parse_errors_total", "settle_last_reading_timestamp_seconds":
		return true // a handful, built on every scrape
	}
	return false
}

// The daemon's registry serves the runtime's families and the channels' together,
// sorted by name, and refuses a collector that reuses a settle family's name.
func TestRegistryMergesAndGuardsNames(t *testing.T) {
	reg := NewRegistry(testState())
	fams, err := reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	names := map[string]bool{}
	for i, mf := range fams {
		names[mf.GetName()] = true
		if i > 0 && fams[i-1].GetName() >= mf.GetName() {
			t.Errorf("families out of order: %s before %s", fams[i-1].GetName(), mf.GetName())
		}
	}
	for _, n := range []string{"go_goroutines", "settle_temperature_celsius", "settle_port_up", "settle_target_due_timestamp_seconds"} {
		if !names[n] {
			t.Errorf("%s missing from the daemon's registry", n)
		}
	}
	clash := prometheus.NewGauge(prometheus.GaugeOpts{Name: "settle_temperature_celsius", Help: "a clash"})
	if err := reg.Register(clash); err == nil {
		t.Error("a collector reusing settle_temperature_celsius was registered")
	}
}
