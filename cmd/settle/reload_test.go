package main

import (
	"context"
	"fmt"
	"net"
	"os"
	"path/filepath"
	"syscall"
	"testing"
	"time"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
)

const reloadConfig = `listen: %s
data_dir: %s
loggers:
  - name: rack2
    port: %s
    line:
      clock_column: 1
      columns: [{index: 2, channel: steel-cyl-a}]
channels:
  - name: steel-cyl-a
    targets:
      - {name: handling, celsius: 50, handling: true}
%s`

// TestReloadOnSignal: a reload with a valid file restarts the pipeline with the new
// targets; a reload with a broken file is refused and the daemon keeps serving.
func TestReloadOnSignal(t *testing.T) {
	p, err := sim.OpenPTY()
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	go sim.Run(ctx, p, sim.NewSim(sim.DemoScenario(), sim.DefaultInterval, 1), sim.Options{Speed: sim.DemoSpeed})

	addr := freeAddr(t)
	dir := t.TempDir()
	path := filepath.Join(dir, "settle.yaml")
	write := func(extra string) {
		body := fmt.Sprintf(reloadConfig, addr, filepath.Join(dir, "data"), p.Path(), extra)
		if err := os.WriteFile(path, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	write("")
	reload := make(chan os.Signal, 1)
	done := make(chan error, 1)
	go func() { done <- runDaemon(ctx, runFlags{configPath: path, logLevel: "error"}, false, reload) }()

	warm := `settle_target_info{channel="steel-cyl-a",kind="temperature",target="warm"}`
	handling := `settle_target_info{channel="steel-cyl-a",kind="handling",target="handling"}`
	base := "http://" + addr
	first := waitScrape(t, base, func(m map[string]float64) bool { return m[handling] == 1 })
	checkReloadSeries(t, "first load", first, 1, 0)

	write("      - {name: warm, celsius: 300}\n")
	reload <- syscall.SIGHUP
	reloaded := waitScrape(t, base, func(m map[string]float64) bool { return m[warm] == 1 })
	checkReloadSeries(t, "valid reload", reloaded, 1, first[reloadedAt])

	write("      - {name: warm, celsius: hot}\n") // not a number: refused
	reload <- syscall.SIGHUP
	time.Sleep(500 * time.Millisecond) // give a wrong reload time to do harm
	m := waitScrape(t, base, func(m map[string]float64) bool { return m[handling] == 1 })
	if m[warm] != 1 {
		t.Error("a refused reload dropped the running configuration's target")
	}
	m = waitScrape(t, base, func(m map[string]float64) bool { return m[reloadOK] == 0 })
	if m[reloadedAt] != reloaded[reloadedAt] || m[warm] != 1 {
		t.Errorf("after a refused reload the last success's time moved (%v, was %v) or the running target went (%v)",
			m[reloadedAt], reloaded[reloadedAt], m[warm])
	}
	// A valid file whose listen address is taken cannot start: the daemon goes back to
	// the configuration it ran and keeps serving.
	taken, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer taken.Close()
	good := fmt.Sprintf(reloadConfig, taken.Addr().String(), filepath.Join(dir, "data"), p.Path(), "")
	if err := os.WriteFile(path, []byte(good), 0o644); err != nil {
		t.Fatal(err)
	}
	reload <- syscall.SIGHUP
	time.Sleep(500 * time.Millisecond)
	waitScrape(t, base, func(m map[string]float64) bool { return m[warm] == 1 })
	if m = waitScrape(t, base, func(m map[string]float64) bool { return m[warm] == 1 }); m[reloadOK] != 0 || m[reloadedAt] != reloaded[reloadedAt] {
		t.Errorf("after a reload that could not start: %s = %v, want 0; %s = %v, want the last success's %v",
			reloadOK, m[reloadOK], reloadedAt, m[reloadedAt], reloaded[reloadedAt])
	}
	select {
	case err := <-done:
		t.Fatalf("the daemon exited after a reload it could not start: %v", err)
	default:
	}

	cancel()
	if err := <-done; err != nil {
		t.Errorf("runDaemon: %v", err)
	}
}

// The reload series (exporter.ConfigReloads).
const (
	reloadOK   = "settle_config_last_reload_successful"
	reloadedAt = "settle_config_last_reload_success_timestamp_seconds"
)

// checkReloadSeries checks a scrape's reload series: successful is want, and the last
// success's time is present, within the last minute and later than after.
func checkReloadSeries(t *testing.T, step string, m map[string]float64, want, after float64) {
	t.Helper()
	at, ok := m[reloadedAt]
	now := float64(time.Now().UnixNano()) / 1e9
	if v, present := m[reloadOK]; !present || v != want || !ok || at <= after || at > now || at < now-60 {
		t.Errorf("%s: %s = %v (present %v), want %v; %s = %v, want after %v and within the last minute of %v",
			step, reloadOK, v, present, want, reloadedAt, at, after, now)
	}
}

func freeAddr(t *testing.T) string {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	return ln.Addr().String()
}

// waitScrape polls /metrics, tolerating refused connections (a reload rebinds the
// listener), until ok accepts a scrape; the deadline only guards against a hang.
func waitScrape(t *testing.T, base string, ok func(map[string]float64) bool) map[string]float64 {
	t.Helper()
	end := time.Now().Add(60 * time.Second)
	for time.Now().Before(end) {
		if m, err := tryScrape(base); err == nil && ok(m) {
			return m
		}
		time.Sleep(100 * time.Millisecond)
	}
	t.Fatalf("no matching scrape from %s within 60 s", base)
	return nil
}
