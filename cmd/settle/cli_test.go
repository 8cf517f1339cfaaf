package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/report"
)

var updateCLI = flag.Bool("update-cli", false, "rewrite the golden error texts in testdata/cli")

// checkGolden compares got with testdata/cli/name (rewritten with -update-cli).
func checkGolden(t *testing.T, name, got string) {
	t.Helper()
	path := filepath.Join("testdata", "cli", name)
	if *updateCLI {
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("golden %s: %v (run with -update-cli to create it)", path, err)
	}
	if got != string(want) {
		t.Errorf("%s:\n got %q\nwant %q", name, got, want)
	}
}

// cliEnv clears every SETTLE_ variable and the default configuration path, so that a
// command sees only what the test gives it.
func cliEnv(t *testing.T) {
	t.Helper()
	for _, v := range []string{envConfig, "SETTLE_DATA_DIR", "SETTLE_LISTEN", "SETTLE_TOKEN"} {
		t.Setenv(v, "")
		os.Unsetenv(v)
	}
	old := defaultConfigPath
	defaultConfigPath = filepath.Join(t.TempDir(), "no-such-settle.yaml")
	t.Cleanup(func() { defaultConfigPath = old })
}

// cliConfigYAML is the test bench: one logger on a pseudo-terminal with a bar and the
// room air, the bar fitted against the measured room. Our own invented scenario.
const cliConfigYAML = `listen: %s
data_dir: %s
http:
  token: %s
loggers:
  - name: bench-c
    port: %s
    line:
      clock_column: 1
      columns:
        - {index: 2, channel: bar-1}
        - {index: 3, channel: room}
channels:
  - name: room
  - name: bar-1
    ambient: room
    targets:
      - {name: handle, celsius: 50, handling: true}
      - {name: settled, within: 2}
`

// writeCLIConfig writes the test configuration and returns its path.
func writeCLIConfig(t *testing.T, listen, dataDir, token, port string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "settle.yaml")
	if err := os.WriteFile(path, []byte(fmt.Sprintf(cliConfigYAML, listen, dataDir, token, port)), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

// startRunCmd runs `settle run --config path` in-process, as the command line does,
// until the test ends, and waits for /healthz.
func startRunCmd(t *testing.T, path, listen string) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() {
		root := newRootCmd()
		root.SetArgs([]string{"run", "--config", path})
		done <- root.ExecuteContext(ctx)
	}()
	t.Cleanup(func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("settle run: %v", err)
		}
	})
	for end := time.Now().Add(30 * time.Second); ; time.Sleep(50 * time.Millisecond) {
		if resp, err := http.Get("http://" + listen + "/healthz"); err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusOK {
				return
			}
		}
		select {
		case err := <-done:
			t.Fatalf("settle run ended: %v", err)
		default:
		}
		if time.Now().After(end) {
			t.Fatal("daemon not serving /healthz after 30 s")
		}
	}
}

// cooling is the bar: Newton cooling from 150 °C toward the 22 °C room with a 20 s
// time constant (our own invented curve), so 50 °C is crossed at 20·ln(128/28) ≈
// 30.4 s and "settled" (within 2 °C) at 20·ln(128/2) ≈ 83.2 s.
func cooling(s float64) float64 { return 22 + 128*math.Exp(-s/20) }

// feedCooling writes the bar and the room on p every 50 ms for span of wall time
// (the logger clock in seconds since the first line), with 0.02 °C noise.
func feedCooling(t *testing.T, p *sim.PTY, span time.Duration) {
	t.Helper()
	rng := rand.New(rand.NewPCG(14, 1))
	start := time.Now()
	tick := time.NewTicker(50 * time.Millisecond)
	defer tick.Stop()
	for now := range tick.C {
		s := now.Sub(start).Seconds()
		if s > span.Seconds() {
			return
		}
		line := fmt.Sprintf("%.3f,%.2f,%.2f\n", s, cooling(s)+0.02*rng.NormFloat64(), 22+0.02*rng.NormFloat64())
		if _, err := p.Write([]byte(line)); err != nil {
			t.Errorf("feed: %v", err)
			return
		}
	}
}

// stableChannel polls the API until the channel's forecast has not changed for 3 s
// (no more readings: no more fits) and returns it.
func stableChannel(t *testing.T, base, name string) exporter.ChannelJSON {
	t.Helper()
	var last exporter.ChannelJSON
	since := time.Now()
	for end := time.Now().Add(60 * time.Second); time.Now().Before(end); time.Sleep(250 * time.Millisecond) {
		ch := channelView(t, base, name)
		if last.Forecast == nil || !ch.Forecast.FittedAt.Equal(last.Forecast.FittedAt) {
			last, since = ch, time.Now()
			continue
		}
		if time.Since(since) > 3*time.Second {
			return ch
		}
	}
	t.Fatalf("forecast of %s still changing after 60 s", name)
	return last
}

// TestCommandLineFromConfigOnly drives a real daemon (`settle run --config`, a real
// pseudo-terminal read through go.bug.st/serial, a real SQLite journal) with every
// record and daemon command given nothing but --config: runs (empty), run-start, runs,
// run-stop, report, export, and fit on the export. It checks that the report and the
// live API agree on every figure of the run, and the error texts against the goldens
// in testdata/cli.
//
// The agreement is exact under a condition the test sets up and the README states:
// the report replays the readings up to the daemon's last recorded forecast of the run,
// which run-stop records, so the report equals what the page showed when the run
// stopped. Here the feed ends before the stop, so that is also what it shows after.
func TestCommandLineFromConfigOnly(t *testing.T) {
	cliEnv(t)
	p, err := sim.OpenPTY()
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	listen, dataDir := freeAddr(t), t.TempDir()
	cfg := writeCLIConfig(t, listen, dataDir, "cli-test-token", p.Path())
	base := "http://" + listen
	startRunCmd(t, cfg, listen)

	cmd := func(args ...string) string {
		t.Helper()
		out, err := executeJournalCmd(t, append(args, "--config", cfg)...)
		if err != nil {
			t.Fatalf("settle %s: %v\n%s", strings.Join(args, " "), err, out)
		}
		return out
	}
	if got := cmd("runs"); got != "no runs yet\n" {
		t.Errorf("runs on a new record: %q, want \"no runs yet\"", got)
	}
	started := cmd("run-start", "--channel", "bar-1", "--specimen", "S-CLI-1")
	runID := regexp.MustCompile(`^started run (\S+): specimen S-CLI-1 on bar-1\n$`).FindStringSubmatch(started)
	if runID == nil {
		t.Fatalf("run-start printed %q", started)
	}
	id := runID[1]
	feedCooling(t, p, 24*time.Second)
	if got := cmd("runs"); !regexp.MustCompile(`^RUN +CHANNEL +SPECIMEN +STARTED +STOPPED\n` + regexp.QuoteMeta(id) + ` +bar-1 +S-CLI-1 +\S+Z +active\n$`).MatchString(got) {
		t.Errorf("runs with one active run:\n%s", got)
	}

	live := stableChannel(t, base, "bar-1")
	if got := cmd("run-stop", "--channel", "bar-1"); got != fmt.Sprintf("stopped run %s (S-CLI-1 on bar-1)\n", id) {
		t.Errorf("run-stop printed %q", got)
	}
	outDir := t.TempDir()
	cmd("report", id, "--out", outDir)
	var rep report.Summary
	readJSONFile(t, filepath.Join(outDir, id+"-summary.json"), &rep)
	compareReportWithLive(t, rep, live)
	var apiSum report.Summary // the daemon's own report of the stopped run
	getJSON(t, base+"/api/v1/runs/"+id+"/summary.json", &apiSum)
	compareReportWithLive(t, apiSum, live)

	csvPath := filepath.Join(t.TempDir(), "bar-1.csv")
	cmd("export", "--channel", "bar-1", "--out", csvPath)
	fitOut, err := runFit(t, csvPath, "--json")
	if err != nil {
		t.Fatalf("fit on the export: %v\n%s", err, fitOut)
	}
	fj, _ := decodeFit(t, fitOut)
	// The export has no ambient column, so the fit finds the ambient itself from 24 s
	// (1.2 time constants) of the curve: within 10 % of the 20 s it was made with.
	if tau := fj.Parameters["tau_s"]; math.Abs(tau-20) > 2 {
		t.Errorf("fit on the export: tau %v s (parameters %v), want 20 ± 2 s", tau, fj.Parameters)
	}

	cliErrorGoldens(t, cfg, id, listen, p.Path())
}

// compareReportWithLive checks every figure the API showed for the channel against
// the report's summary: model, parameters, ambient, time constant, residual, points,
// segment and fit times, and each target's state, time and interval.
func compareReportWithLive(t *testing.T, s report.Summary, live exporter.ChannelJSON) {
	t.Helper()
	m, f := s.Model, live.Forecast
	if m == nil {
		t.Fatal("report has no model")
	}
	eq := func(what string, a, b *float64) {
		if (a == nil) != (b == nil) || a != nil && *a != *b {
			t.Errorf("%s: report %v, live %v", what, deref(a), deref(b))
		}
	}
	if m.Name != f.Model || m.Points != f.Points || !m.SegmentStart.Equal(f.SegmentStart) || !m.FittedAt.Equal(f.FittedAt) || m.OutOfRange != f.OutOfRange {
		t.Errorf("model: report %s, %d points, segment %v, fitted at %v; live %s, %d, %v, %v",
			m.Name, m.Points, m.SegmentStart, m.FittedAt, f.Model, f.Points, f.SegmentStart, f.FittedAt)
	}
	eq("ambient_c", m.AmbientC, f.AmbientC)
	eq("time_constant_s", m.TimeConstantS, f.TimeConstantS)
	eq("rmse_c", m.RMSEC, f.RMSEC)
	eq("biot", m.Biot, f.Biot)
	if len(m.Parameters) != len(f.Parameters) {
		t.Fatalf("report parameters %+v, live %+v", m.Parameters, f.Parameters)
	}
	for i, p := range m.Parameters {
		q := f.Parameters[i]
		if p.Name != q.Name || p.Unit != q.Unit {
			t.Errorf("parameter %d: report %s (%s), live %s (%s)", i, p.Name, p.Unit, q.Name, q.Unit)
		}
		eq(p.Name, p.Value, q.Value)
		eq(p.Name+" stderr", p.StdErr, q.StdErr)
	}
	if len(s.Targets) != len(live.Targets) {
		t.Fatalf("report targets %d, live %d", len(s.Targets), len(live.Targets))
	}
	// The live view re-anchors the fit to the readings since it (lead_s): the report,
	// a replay of the fit, has its predicted times lead_s later.
	lead := time.Duration(f.LeadS * float64(time.Second))
	for i, tg := range s.Targets {
		lt := live.Targets[i]
		same := func(a, b *time.Time) bool {
			if a == nil || b == nil {
				return a == nil && b == nil
			}
			if lt.State != string(predict.StatePredicted) {
				return a.Equal(*b)
			}
			return (a.Sub(*b) - lead).Abs() <= time.Microsecond // lead_s went through JSON
		}
		if tg.Name != lt.Name || tg.State != lt.State || !same(tg.PredictedAt, lt.At) || !same(tg.Earliest, lt.Earliest) || !same(tg.Latest, lt.Latest) {
			t.Errorf("target %s: report %s at %v [%v, %v]; live %s %s at %v [%v, %v]", tg.Name, tg.State,
				tp(tg.PredictedAt), tp(tg.Earliest), tp(tg.Latest), lt.Name, lt.State, tp(lt.At), tp(lt.Earliest), tp(lt.Latest))
		}
	}
	if f.AmbientC == nil || math.Abs(*f.AmbientC-22) > 0.1 {
		t.Errorf("live ambient %v, want the measured room, 22 ± 0.1 °C", deref(f.AmbientC))
	}
	if t.Failed() {
		return
	}
	t.Logf("report = live: %s, %d points, ambient %.2f °C, tau %.2f s, %s %s at %v", m.Name, m.Points, *m.AmbientC,
		deref(m.TimeConstantS), s.Targets[0].Name, s.Targets[0].State, tp(s.Targets[0].PredictedAt))
}

func deref(p *float64) any {
	if p == nil {
		return nil
	}
	return *p
}

func tp(p *time.Time) any {
	if p == nil {
		return nil
	}
	return p.UTC().Format(time.RFC3339Nano)
}

func readJSONFile(t *testing.T, path string, v any) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
}

// cliErrorGoldens runs the commands a user gets wrong and compares each error, as
// `settle` prints it, with its golden (paths and run ids replaced by CONFIG, DIR and
// RUN). Each also exits non-zero.
func cliErrorGoldens(t *testing.T, cfg, runID, listen, port string) {
	noToken := writeCLIConfig(t, listen, t.TempDir(), "", port)
	emptyDir := t.TempDir()
	emptyCSV := filepath.Join(t.TempDir(), "empty.csv")
	if err := os.WriteFile(emptyCSV, nil, 0o600); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		golden string
		args   []string
	}{
		{"export-unknown-channel", []string{"export", "--config", cfg, "--channel", "spec-3000"}},
		{"runs-unknown-channel", []string{"runs", "--config", cfg, "--channel", "spec-3000"}},
		{"runs-unknown-specimen", []string{"runs", "--config", cfg, "--specimen", "S-CLI-9"}},
		{"report-unknown-run", []string{"report", "20260101T000000Z-bar-9", "--config", cfg}},
		{"run-start-unknown-channel", []string{"run-start", "--config", cfg, "--channel", "spec-3000", "--specimen", "S-1"}},
		{"run-stop-no-active-run", []string{"run-stop", "--config", cfg, "--channel", "bar-1"}},
		{"run-stop-unknown-run", []string{"run-stop", "--config", cfg, "--run", "20260101T000000Z-bar-9"}},
		{"run-start-no-token", []string{"run-start", "--config", noToken, "--channel", "bar-1", "--specimen", "S-1"}},
		{"run-start-no-config", []string{"run-start", "--channel", "bar-1", "--specimen", "S-1"}},
		{"runs-no-config", []string{"runs"}},
		{"runs-no-journal", []string{"runs", "--data-dir", emptyDir}},
		{"fit-empty-file", []string{"fit", emptyCSV}},
	} {
		out, err := executeJournalCmd(t, c.args...)
		if err == nil {
			t.Errorf("settle %s: no error; printed %q", strings.Join(c.args, " "), out)
			continue
		}
		got := "settle: " + err.Error() + "\n"
		for from, to := range map[string]string{noToken: "CONFIG", cfg: "CONFIG", emptyDir: "DIR", emptyCSV: "EMPTY.csv", runID: "RUN", listen: "ADDR"} {
			got = strings.ReplaceAll(got, from, to)
		}
		checkGolden(t, c.golden, got)
		if code := run(c.args); code != 1 {
			t.Errorf("settle %s exits %d, want 1", strings.Join(c.args, " "), code)
		}
	}
}
