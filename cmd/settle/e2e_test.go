package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
	"github.com/settle-lab/settle/config"
)

// startDaemon runs a daemon on cfg (listening on a free loopback port) until the test
// ends, and returns its base URL.
func startDaemon(t *testing.T, cfg *config.Config) string {
	t.Helper()
	cfg.Listen = "127.0.0.1:0"
	if cfg.DataDir == "" {
		cfg.DataDir = t.TempDir()
	}
	d, err := newDaemon(cfg, slog.New(slog.NewTextHandler(io.Discard, nil)))
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	t.Cleanup(func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("daemon.Run: %v", err)
		}
	})
	select { // the start-up replay of the journal runs in the background
	case <-d.replay.done():
	case <-time.After(30 * time.Second):
		t.Fatal("journal replay not done after 30 s")
	}
	return "http://" + d.Addr()
}

// runDemoDaemon starts the demo rack and a daemon reading it, with cfg adjusted by
// edit, and returns the daemon's URL and the configuration.
func runDemoDaemon(t *testing.T, edit func(*config.Config)) (string, *config.Config) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	cfg, stop, err := startDemo(ctx, slog.New(slog.NewTextHandler(io.Discard, nil)))
	if err != nil {
		cancel()
		t.Fatal(err)
	}
	t.Cleanup(func() { stop(); cancel() }) // runs after the daemon's own cleanup
	if edit != nil {
		edit(cfg)
	}
	return startDaemon(t, cfg), cfg
}

// scrape fetches /metrics and returns every settle_ sample keyed by its name and labels
// as printed, e.g. `settle_port_up{logger="rack2"}`.
func scrape(t *testing.T, base string) map[string]float64 {
	t.Helper()
	m, err := tryScrape(base)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// tryScrape is scrape returning its error, for callers that expect refusals.
func tryScrape(base string) (map[string]float64, error) {
	resp, err := http.Get(base + "/metrics")
	if err != nil {
		return nil, err
	}
	defer resp.Body.Close()
	out := map[string]float64{}
	sc := bufio.NewScanner(resp.Body)
	for sc.Scan() {
		line := sc.Text()
		if !strings.HasPrefix(line, "settle_") {
			continue
		}
		i := strings.LastIndexByte(line, ' ')
		v, err := strconv.ParseFloat(line[i+1:], 64)
		if err != nil {
			return nil, fmt.Errorf("metric line %q: %w", line, err)
		}
		out[line[:i]] = v
	}
	return out, sc.Err()
}

// waitFor polls scrape until ok accepts it or the deadline passes. The deadline guards
// against a hang; it is not a speed assertion.
func waitFor(t *testing.T, base string, deadline time.Duration, ok func(map[string]float64) bool) map[string]float64 {
	t.Helper()
	end := time.Now().Add(deadline)
	for {
		m := scrape(t, base)
		if ok(m) {
			return m
		}
		if time.Now().After(end) {
			t.Fatalf("condition not met after %v; last scrape had %d settle_ samples", deadline, len(m))
		}
		time.Sleep(100 * time.Millisecond)
	}
}

// TestDemoForecastsEverySpecimen runs the built-in demo exactly as `settle run --demo`
// does and waits for a handling-target forecast for every demo specimen. The issue asks
// for one within 60 s of wall time; the wait below is that bound.
func TestDemoForecastsEverySpecimen(t *testing.T) {
	base, cfg := runDemoDaemon(t, nil)
	var specimens []string
	for _, ch := range cfg.Channels {
		for _, tg := range ch.Targets {
			if tg.Handling {
				specimens = append(specimens, ch.Name)
			}
		}
	}
	if len(specimens) < 4 {
		t.Fatalf("demo has %d specimens with a handling target, want at least 4", len(specimens))
	}
	start := time.Now()
	waitFor(t, base, 60*time.Second, func(m map[string]float64) bool {
		for _, ch := range specimens {
			eta := fmt.Sprintf(`settle_target_eta_timestamp_seconds{channel="%s",target="handling"}`, ch)
			reached := fmt.Sprintf(`settle_target_reached{channel="%s",target="handling"}`, ch)
			if m[eta] == 0 && m[reached] != 1 {
				return false
			}
		}
		return true
	})
	t.Logf("every demo specimen had a forecast after %v of wall time", time.Since(start).Round(time.Millisecond))
}

// TestDemoRecordsRuns checks the demo's record end to end: each specimen has a run from
// the configuration, and a run's report downloads as CSV, JSON and PNG while it runs.
func TestDemoRecordsRuns(t *testing.T) {
	base, cfg := runDemoDaemon(t, nil)
	waitFor(t, base, 60*time.Second, func(m map[string]float64) bool {
		return m[`settle_fit_points{channel="steel-cyl-a"}`] >= 30
	})
	var list struct {
		Runs []struct {
			ID, Channel, Specimen, Origin string
		} `json:"runs"`
	}
	getJSON(t, base+"/api/v1/runs", &list)
	specimens := map[string]string{}
	for _, r := range list.Runs {
		if r.Origin == "config" {
			specimens[r.Channel] = r.ID
		}
	}
	for _, ch := range cfg.Channels {
		if ch.Run != nil && specimens[ch.Name] == "" {
			t.Errorf("no configured run for %s; runs: %+v", ch.Name, list.Runs)
		}
	}
	// The journal commits every second: its health is on /metrics.
	jm := waitFor(t, base, 30*time.Second, func(m map[string]float64) bool {
		return m["settle_journal_committed_readings_total"] > 0
	})
	if jm["settle_journal_writable"] != 1 || jm["settle_journal_last_commit_timestamp_seconds"] == 0 {
		t.Errorf("journal metrics: writable %v, last commit %v", jm["settle_journal_writable"],
			jm["settle_journal_last_commit_timestamp_seconds"])
	}
	id := specimens["steel-cyl-a"]
	if id == "" {
		t.FailNow()
	}
	for _, c := range []struct{ file, prefix string }{
		{"readings.csv", "time"},
		{"summary.json", "{"},
		{"figure.png", "\x89PNG"},
	} {
		body := get(t, base+"/api/v1/runs/"+id+"/"+c.file)
		if !strings.HasPrefix(body, c.prefix) {
			t.Errorf("%s starts %q, want %q", c.file, body[:min(len(body), 20)], c.prefix)
		}
	}
	var sum struct {
		Run struct{ Specimen, Channel string }
	}
	getJSON(t, base+"/api/v1/runs/"+id+"/summary.json", &sum)
	if sum.Run.Specimen != "S2611-A" || sum.Run.Channel != "steel-cyl-a" {
		t.Errorf("summary.json run = %+v, want specimen S2611-A on steel-cyl-a", sum.Run)
	}
}

func get(t *testing.T, url string) string {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	if resp.StatusCode != http.StatusOK {
		t.Fatalf("GET %s: %s: %s", url, resp.Status, b)
	}
	return string(b)
}

func getJSON(t *testing.T, url string, v any) {
	t.Helper()
	if err := json.Unmarshal([]byte(get(t, url)), v); err != nil {
		t.Fatalf("GET %s: %v", url, err)
	}
}

// TestRestartResumesFromJournal stops a daemon mid-run and starts a new one on the same
// data folder with a logger that sends nothing: its forecasts must come back from the
// journal alone, before any new reading.
func TestRestartResumesFromJournal(t *testing.T) {
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	cfg, stopSim, err := startDemo(ctx, log)
	if err != nil {
		t.Fatal(err)
	}
	cfg.DataDir, cfg.Listen = dir, "127.0.0.1:0"
	first, err := newDaemon(cfg, log)
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- first.Run(ctx) }()
	before := waitFor(t, "http://"+first.Addr(), 60*time.Second, func(m map[string]float64) bool {
		return m[`settle_fit_points{channel="steel-cyl-a"}`] >= 40
	})
	cancel()
	if err := <-done; err != nil {
		t.Fatalf("first daemon: %v", err)
	}
	stopSim()

	silent, err := sim.OpenPTY() // a logger that is plugged in but sends nothing
	if err != nil {
		t.Fatal(err)
	}
	defer silent.Close()
	cfg2 := sim.DemoScenario().DemoConfig(silent.Path())
	cfg2.DataDir = dir
	url := startDaemon(t, &cfg2)
	var health struct {
		ReplayDone bool  `json:"replay_done"`
		Replayed   int64 `json:"replayed_readings"`
	}
	getJSON(t, url+"/healthz", &health)
	if !health.ReplayDone || health.Replayed < 40 {
		t.Errorf("/healthz after the replay: %+v, want replay_done and at least 40 readings", health)
	}
	m := scrape(t, url)
	pts := m[`settle_fit_points{channel="steel-cyl-a"}`]
	if pts < before[`settle_fit_points{channel="steel-cyl-a"}`] {
		t.Errorf("after restart the steel fit has %v points, want at least the %v it had", pts,
			before[`settle_fit_points{channel="steel-cyl-a"}`])
	}
	for _, ch := range []string{"steel-cyl-a", "brass-sphere-b"} {
		eta := fmt.Sprintf(`settle_target_eta_timestamp_seconds{channel="%s",target="handling"}`, ch)
		reached := fmt.Sprintf(`settle_target_reached{channel="%s",target="handling"}`, ch)
		if m[eta] == 0 && m[reached] != 1 {
			t.Errorf("after restart %s has no handling forecast", ch)
		}
	}
	if m[`settle_temperature_celsius{channel="steel-cyl-a"}`] == 0 {
		t.Error("after restart the steel's latest temperature is missing")
	}
}
