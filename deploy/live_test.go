package deploy

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"net"
	"net/http"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

// The live test: a real Prometheus server on loopback scrapes two settle daemons that run
// the demo (a simulated rack on a pseudo-terminal at 60x time-lapse), evaluates the real
// settle-alerts.yml, and is asked through its HTTP API whether the targets are up, whether
// the forecast series arrived with their lab and bench labels, and whether the handling
// alert goes pending or firing when a demo specimen reaches its handling target (the
// alumina tile reaches 50 °C after about 13 s of wall time).
//
// Every wait polls with a generous deadline that only guards against a hang; nothing here
// asserts how fast anything is.

// liveBench is one settle daemon in the live test and the target labels Prometheus gives it.
type liveBench struct {
	lab, bench string
	addr       string // host:port of its HTTP server
}

// alertReady is the handling alert the live test waits for.
const alertReady = "SettleSpecimenReadyToHandle"

func TestLivePrometheusScrapesTwoDemos(t *testing.T) {
	if testing.Short() {
		t.Skip("live Prometheus test takes ~20 s; skipped with -short")
	}
	prometheus := requireTool(t, "prometheus", "prometheus")
	promtool := requireTool(t, "promtool", "prometheus")
	dir := t.TempDir() // registered first, so it is removed after every child has stopped
	settle := buildSettle(t, dir)

	ports := freePorts(t, 3)
	benches := []liveBench{
		{lab: "demo-lab", bench: "bench-a", addr: ports[0]},
		{lab: "demo-lab", bench: "bench-b", addr: ports[1]},
	}
	for _, b := range benches {
		startSettleDemo(t, settle, dir, b)
	}
	prom := startPrometheus(t, prometheus, promtool, dir, ports[2], benches)

	t.Run("TargetsUp", func(t *testing.T) { waitTargetsUp(t, prom, benches) })
	t.Run("ForecastSeries", func(t *testing.T) { checkForecastSeries(t, prom, benches) })
	t.Run("HandlingAlert", func(t *testing.T) { checkHandlingAlert(t, prom, benches) })
	t.Run("PromtoolCheckMetrics", func(t *testing.T) {
		checkLiveMetrics(t, promtool, "http://"+benches[0].addr+"/metrics")
	})
}

// buildSettle builds the daemon once into dir and returns the binary's path. `go test`
// puts its own go first on PATH.
func buildSettle(t *testing.T, dir string) string {
	t.Helper()
	goTool, err := exec.LookPath("go")
	if err != nil {
		t.Fatalf("go not on PATH, needed to build ../cmd/settle: %v", err)
	}
	bin := filepath.Join(dir, "settle")
	run(t, ".", goTool, "build", "-o", bin, "../cmd/settle")
	return bin
}

// freePorts returns n distinct free loopback addresses. All listeners stay open until
// every address is chosen, so the n addresses differ; another process could still take
// one before our child binds it, which would fail the test with the child's log.
func freePorts(t *testing.T, n int) []string {
	t.Helper()
	var addrs []string
	for range n {
		ln, err := net.Listen("tcp", "127.0.0.1:0")
		if err != nil {
			t.Fatalf("find a free loopback port: %v", err)
		}
		defer ln.Close()
		addrs = append(addrs, ln.Addr().String())
	}
	return addrs
}

// child is a process the test started; its output goes to a log file in the temp dir.
type child struct {
	name string
	log  string        // path of the combined stdout and stderr
	done chan struct{} // closed when the process has exited
	err  error         // Wait's result, set before done closes
}

// stopGrace is how long a child may take to exit after SIGTERM before it is killed and
// the test fails: the TimeoutStopSec=30s of systemd/settle.service, after which systemd
// would kill the daemon too. It guards against a hang; it is not a speed target.
const stopGrace = 30 * time.Second

// startChild starts a process and registers its stop in t.Cleanup: SIGTERM, then SIGKILL
// if it has not exited within stopGrace. A child that exits non-zero on SIGTERM, or
// before the test stopped it, fails the test. When the test failed, the cleanup prints
// its log.
func startChild(t *testing.T, name, dir, bin string, args ...string) *child {
	t.Helper()
	c := &child{name: name, log: filepath.Join(dir, name+".log"), done: make(chan struct{})}
	logFile, err := os.Create(c.log)
	if err != nil {
		t.Fatalf("create log for %s: %v", name, err)
	}
	defer logFile.Close() // the child holds its own descriptor
	cmd := exec.Command(bin, args...)
	cmd.Dir = dir
	cmd.Stdout, cmd.Stderr = logFile, logFile
	if err := cmd.Start(); err != nil {
		t.Fatalf("start %s (%s %v): %v", name, bin, args, err)
	}
	go func() { c.err = cmd.Wait(); close(c.done) }()
	t.Cleanup(func() {
		c.stop(t, cmd.Process)
		if t.Failed() {
			t.Logf("log of %s (%s):\n%s", name, c.log, c.logTail())
		}
	})
	return c
}

func (c *child) stop(t *testing.T, p *os.Process) {
	if c.exited() {
		t.Errorf("%s exited before the test stopped it: %v", c.name, c.err)
		return
	}
	_ = p.Signal(syscall.SIGTERM)
	select {
	case <-c.done:
		if c.err != nil {
			t.Errorf("%s on SIGTERM: %v, want a clean exit", c.name, c.err)
		}
	case <-time.After(stopGrace):
		t.Errorf("%s did not exit within %v of SIGTERM; killing it", c.name, stopGrace)
		_ = p.Kill()
		<-c.done
	}
}

func (c *child) exited() bool {
	select {
	case <-c.done:
		return true
	default:
		return false
	}
}

// logTail returns the last 4 KiB of the child's log.
func (c *child) logTail() string {
	b, err := os.ReadFile(c.log)
	if err != nil {
		return fmt.Sprintf("(cannot read %s: %v)", c.log, err)
	}
	if len(b) > 4096 {
		b = b[len(b)-4096:]
	}
	return string(b)
}

// waitHTTP polls url until it answers 200, failing early if the child exits.
func waitHTTP(t *testing.T, c *child, url string, deadline time.Duration) {
	t.Helper()
	poll(t, deadline, "GET "+url+" answers 200", func() bool {
		if c.exited() {
			t.Fatalf("%s exited before %s answered (%v); log:\n%s", c.name, url, c.err, c.logTail())
		}
		resp, err := http.Get(url)
		if err != nil {
			return false
		}
		resp.Body.Close()
		return resp.StatusCode == http.StatusOK
	})
}

// poll calls ok every 250 ms until it returns true, or fails the test after deadline.
// The deadline guards against a hang; it is not a speed assertion.
func poll(t *testing.T, deadline time.Duration, what string, ok func() bool) {
	t.Helper()
	end := time.Now().Add(deadline)
	for !ok() {
		if time.Now().After(end) {
			t.Fatalf("waited %v for: %s", deadline, what)
		}
		time.Sleep(250 * time.Millisecond)
	}
}

// startSettleDemo runs `settle run --demo` for b, with its data directory in dir, and
// waits until its /healthz answers.
func startSettleDemo(t *testing.T, settle, dir string, b liveBench) {
	t.Helper()
	dataDir := filepath.Join(dir, b.bench)
	c := startChild(t, "settle-"+b.bench, dir, settle,
		"run", "--demo", "--listen", b.addr, "--data-dir", dataDir)
	waitHTTP(t, c, "http://"+b.addr+"/healthz", 20*time.Second)
}

// liveConfig is the Prometheus configuration of the live test. It loads the real
// deploy/prometheus/settle-alerts.yml, unchanged: SettleSpecimenReadyToHandle has no
// `for:` and relies on settle_target_reached, so it works on the demo's time-lapse and
// needs no shortened copy. (Rules that compare logger timestamps with time(), such as
// SettleReadingsStale and SettleTargetSoon, see the demo's clock run ahead of wall time;
// the test does not look at them.)
func liveConfig(rules string, benches []liveBench) string {
	var b strings.Builder
	fmt.Fprintf(&b, `global:
  scrape_interval: 1s
  scrape_timeout: 1s
  evaluation_interval: 1s
rule_files:
  - %q
scrape_configs:
  - job_name: settle
    static_configs:
`, rules)
	for _, lb := range benches {
		fmt.Fprintf(&b, "      - targets: [%q]\n        labels: {lab: %q, bench: %q}\n",
			lb.addr, lb.lab, lb.bench)
	}
	return b.String()
}

// startPrometheus writes the live configuration into dir, checks it with promtool,
// starts Prometheus on addr with its TSDB in dir, waits until it is ready and returns its
// base URL.
func startPrometheus(t *testing.T, prometheus, promtool, dir, addr string, benches []liveBench) string {
	t.Helper()
	rules, err := filepath.Abs(filepath.Join(promDir, "settle-alerts.yml"))
	if err != nil {
		t.Fatal(err)
	}
	cfgPath := filepath.Join(dir, "prometheus.yml")
	if err := os.WriteFile(cfgPath, []byte(liveConfig(rules, benches)), 0o644); err != nil {
		t.Fatalf("write %s: %v", cfgPath, err)
	}
	run(t, dir, promtool, "check", "config", cfgPath)
	c := startChild(t, "prometheus", dir, prometheus,
		"--config.file="+cfgPath,
		"--storage.tsdb.path="+filepath.Join(dir, "tsdb"),
		"--web.listen-address="+addr)
	base := "http://" + addr
	waitHTTP(t, c, base+"/-/ready", 30*time.Second)
	return base
}

// apiGet calls a Prometheus HTTP API endpoint and decodes its data field into out.
func apiGet(t *testing.T, base, path string, params url.Values, out any) {
	t.Helper()
	u := base + path
	if len(params) > 0 {
		u += "?" + params.Encode()
	}
	resp, err := http.Get(u)
	if err != nil {
		t.Fatalf("GET %s: %v", u, err)
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatalf("GET %s: read body: %v", u, err)
	}
	var env struct {
		Status string          `json:"status"`
		Error  string          `json:"error"`
		Data   json.RawMessage `json:"data"`
	}
	if err := json.Unmarshal(body, &env); err != nil {
		t.Fatalf("GET %s: decode %q: %v", u, body, err)
	}
	if env.Status != "success" {
		t.Fatalf("GET %s: status %q, error %q", u, env.Status, env.Error)
	}
	if err := json.Unmarshal(env.Data, out); err != nil {
		t.Fatalf("GET %s: decode data %s: %v", u, env.Data, err)
	}
}

// promTarget is one active target of /api/v1/targets.
type promTarget struct {
	Labels    map[string]string `json:"labels"`
	Health    string            `json:"health"`
	LastError string            `json:"lastError"`
}

// waitTargetsUp waits until Prometheus reports both settle targets up, with their labels.
func waitTargetsUp(t *testing.T, prom string, benches []liveBench) {
	var last []promTarget
	poll(t, 30*time.Second, "both settle targets up", func() bool {
		var data struct {
			Active []promTarget `json:"activeTargets"`
		}
		apiGet(t, prom, "/api/v1/targets", url.Values{"state": {"active"}}, &data)
		last = data.Active
		for _, b := range benches {
			if !targetUp(data.Active, b) {
				return false
			}
		}
		return true
	})
	if len(last) != len(benches) {
		t.Errorf("Prometheus has %d active targets, want %d: %+v", len(last), len(benches), last)
	}
}

func targetUp(targets []promTarget, b liveBench) bool {
	for _, tg := range targets {
		l := tg.Labels
		if l["job"] == "settle" && l["instance"] == b.addr && l["lab"] == b.lab &&
			l["bench"] == b.bench && tg.Health == "up" {
			return true
		}
	}
	return false
}

// promSample is one element of an instant vector from /api/v1/query.
type promSample struct {
	Metric map[string]string `json:"metric"`
	Value  [2]any            `json:"value"` // [unix time, "value"]
}

func (s promSample) float(t *testing.T) float64 {
	t.Helper()
	str, _ := s.Value[1].(string)
	v, err := strconv.ParseFloat(str, 64)
	if err != nil {
		t.Fatalf("sample %v: value %v: %v", s.Metric, s.Value, err)
	}
	return v
}

// query evaluates an instant query at time at (unix seconds; 0 means now).
func query(t *testing.T, prom, q string, at float64) []promSample {
	t.Helper()
	params := url.Values{"query": {q}}
	if at != 0 {
		params.Set("time", strconv.FormatFloat(at, 'f', 3, 64))
	}
	var data struct {
		ResultType string       `json:"resultType"`
		Result     []promSample `json:"result"`
	}
	apiGet(t, prom, "/api/v1/query", params, &data)
	if data.ResultType != "vector" {
		t.Fatalf("query %s: result type %q, want vector", q, data.ResultType)
	}
	return data.Result
}

// seriesKey names a forecast series within a bench.
func seriesKey(m map[string]string) string {
	return m["bench"] + "/" + m["channel"] + "/" + m["target"]
}

// checkForecastSeries queries settle_target_eta_timestamp_seconds through Prometheus,
// waits until both benches have forecasts, and checks each one against its interval.
func checkForecastSeries(t *testing.T, prom string, benches []liveBench) {
	const eta = `settle_target_eta_timestamp_seconds{job="settle"}`
	var at float64
	var etas []promSample
	poll(t, 30*time.Second, "forecast series from both benches", func() bool {
		at = float64(time.Now().UnixMilli()) / 1000
		etas = query(t, prom, eta, at)
		for _, b := range benches {
			if countBench(etas, b) == 0 {
				return false
			}
		}
		return true
	})
	for _, b := range benches {
		t.Logf("%s: %d forecast series through Prometheus", b.bench, countBench(etas, b))
	}
	// The same instant for all three, so each ETA is compared with its own interval.
	earliest := byKey(t, query(t, prom, `settle_target_eta_earliest_timestamp_seconds{job="settle"}`, at))
	latest := byKey(t, query(t, prom, `settle_target_eta_latest_timestamp_seconds{job="settle"}`, at))
	for _, s := range etas {
		key, v := seriesKey(s.Metric), s.float(t)
		// A Unix time in seconds after 2020-01-01 (1577836800): not milliseconds, not zero.
		if v < 1577836800 || v > 1e10 {
			t.Errorf("%s: ETA %v is not a Unix time in seconds", key, v)
		}
		lo, okLo := earliest[key]
		hi, okHi := latest[key]
		if okLo && okHi && (v < lo || v > hi) {
			t.Errorf("%s: ETA %v outside its interval [%v, %v]", key, v, lo, hi)
		}
	}
}

// countBench counts the samples that carry b's instance, lab and bench labels.
func countBench(samples []promSample, b liveBench) int {
	n := 0
	for _, s := range samples {
		m := s.Metric
		if m["instance"] == b.addr && m["lab"] == b.lab && m["bench"] == b.bench {
			n++
		}
	}
	return n
}

func byKey(t *testing.T, samples []promSample) map[string]float64 {
	t.Helper()
	out := make(map[string]float64, len(samples))
	for _, s := range samples {
		out[seriesKey(s.Metric)] = s.float(t)
	}
	return out
}

// promAlert is one alert of /api/v1/alerts.
type promAlert struct {
	Labels      map[string]string `json:"labels"`
	Annotations map[string]string `json:"annotations"`
	State       string            `json:"state"`
	Value       string            `json:"value"`
}

// readyAlerts returns the pending or firing SettleSpecimenReadyToHandle alerts.
func readyAlerts(t *testing.T, prom string) []promAlert {
	t.Helper()
	var data struct {
		Alerts []promAlert `json:"alerts"`
	}
	apiGet(t, prom, "/api/v1/alerts", nil, &data)
	var out []promAlert
	for _, a := range data.Alerts {
		if a.Labels["alertname"] == alertReady && (a.State == "pending" || a.State == "firing") {
			out = append(out, a)
		}
	}
	return out
}

// checkHandlingAlert waits until the handling alert is pending or firing for a demo
// specimen on each bench, then checks every such alert against the series it came from.
func checkHandlingAlert(t *testing.T, prom string, benches []liveBench) {
	var alerts []promAlert
	poll(t, 60*time.Second, alertReady+" pending or firing on both benches", func() bool {
		alerts = readyAlerts(t, prom)
		for _, b := range benches {
			if !alertOnBench(alerts, b) {
				return false
			}
		}
		return true
	})
	// Queried after the alerts were read. A reading that crossed a target stays the
	// first crossing, so settle_target_reached only goes from 0 to 1: an alerted target
	// must be reached now, and one not reached now cannot have alerted before.
	reached := byKey(t, query(t, prom,
		`settle_target_reached{job="settle"} * on (instance, channel, target) group_left settle_target_info{kind="handling"}`, 0))
	celsius := byKey(t, query(t, prom, `settle_target_celsius{job="settle"}`, 0))
	alerted := map[string]bool{}
	for _, a := range alerts {
		key := seriesKey(a.Labels)
		alerted[key] = true
		t.Logf("%s %s: %s", a.State, key, a.Annotations["summary"])
		checkAlert(t, a, reached, celsius)
	}
	// The silent side: a handling target not reached yet has no alert (checkAlert proved
	// alerted => reached). The demo's brass sphere needs over a minute of wall time.
	silent := 0
	for key, r := range reached {
		if r == 0 && !alerted[key] {
			silent++
		}
	}
	if silent == 0 {
		t.Errorf("every handling target is reached or alerted (%v); want one still silent, to show the alert is selective", reached)
	}
}

func alertOnBench(alerts []promAlert, b liveBench) bool {
	for _, a := range alerts {
		if a.Labels["instance"] == b.addr && a.Labels["bench"] == b.bench && a.Labels["lab"] == b.lab {
			return true
		}
	}
	return false
}

// checkAlert checks one handling alert: reached, valued at its target temperature,
// labelled and annotated with the cautions.
func checkAlert(t *testing.T, a promAlert, reached, celsius map[string]float64) {
	t.Helper()
	key := seriesKey(a.Labels)
	if r, ok := reached[key]; !ok || r != 1 {
		t.Errorf("%s: alert active but settle_target_reached (handling) = %v (present %v)", key, r, ok)
	}
	v, err := strconv.ParseFloat(a.Value, 64)
	if err != nil {
		t.Errorf("%s: alert value %q: %v", key, a.Value, err)
	} else if want, ok := celsius[key]; !ok || v != want {
		t.Errorf("%s: alert value %v, want settle_target_celsius %v (present %v)", key, v, want, ok)
	}
	if a.Labels["severity"] != "info" || a.Labels["job"] != "settle" {
		t.Errorf("%s: labels %v, want severity=info and job=settle", key, a.Labels)
	}
	// The rendered summary names the channel and bench; the description carries the
	// cautions (DESIGN.md, Safety).
	if s := a.Annotations["summary"]; !strings.Contains(s, a.Labels["channel"]) || !strings.Contains(s, a.Labels["bench"]) {
		t.Errorf("%s: summary %q does not name the channel and bench", key, s)
	}
	desc := strings.Join(strings.Fields(a.Annotations["description"]), " ")
	for _, c := range []string{"estimate", "contact thermometer", "protective gloves", "core lags the surface"} {
		if !strings.Contains(desc, c) {
			t.Errorf("%s: description lacks %q: %s", key, c, desc)
		}
	}
}

// checkLiveMetrics pipes a live scrape of url into `promtool check metrics`, which fails
// on exposition-format errors and lint problems (names, units, help texts).
func checkLiveMetrics(t *testing.T, promtool, url string) {
	resp, err := http.Get(url)
	if err != nil {
		t.Fatalf("GET %s: %v", url, err)
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatalf("GET %s: %v", url, err)
	}
	if !bytes.Contains(body, []byte("settle_target_eta_timestamp_seconds{")) {
		t.Fatalf("GET %s: no forecast series in the scrape:\n%s", url, body)
	}
	cmd := exec.Command(promtool, "check", "metrics")
	cmd.Stdin = bytes.NewReader(body)
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Errorf("promtool check metrics on %s: %v\n%s", url, err, out)
	}
}
