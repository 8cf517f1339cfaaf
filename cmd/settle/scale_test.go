package main

import (
	"bufio"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/daq/ptytest"
	"github.com/settle-lab/settle/exporter"
)

// perLogger is how many channels each simulated logger carries (columns of one line).
const perLogger = 8

// scaleSizes are the channel counts TestScaleChannels runs: 16, or the comma-separated
// list in SETTLE_SCALE_CHANNELS (for example 16,128,1000).
func scaleSizes(t *testing.T) []int {
	s := os.Getenv("SETTLE_SCALE_CHANNELS")
	if s == "" {
		return []int{16}
	}
	var out []int
	for _, f := range strings.Split(s, ",") {
		n, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil || n < perLogger {
			t.Fatalf("SETTLE_SCALE_CHANNELS=%q: want channel counts of at least %d", s, perLogger)
		}
		out = append(out, n)
	}
	return out
}

// scaleSpan is how long each size is fed: 40 s (20 s with -short: the first fits
// come in its measured second half), or
// SETTLE_SCALE_SECONDS.
func scaleSpan(t *testing.T) time.Duration {
	if s := os.Getenv("SETTLE_SCALE_SECONDS"); s != "" {
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("SETTLE_SCALE_SECONDS=%q: %v", s, err)
		}
		return time.Duration(v * float64(time.Second))
	}
	if testing.Short() {
		return 20 * time.Second
	}
	return 40 * time.Second
}

// TestScaleChannels runs the real daemon (a separate process, so its CPU time and
// memory are its own) on loggers of 8 channels each, one line a second per logger, every
// channel a specimen cooling from up to 300 °C toward an unmeasured room (the ambient is
// fitted: the costlier case) with a handling target. It asserts what must hold at any
// size — every channel forecast, no reading dropped — and logs what a lab sizing a
// machine needs: the daemon's CPU (share of one core), its peak memory, how old the
// forecasts are (the newest reading each reflects, and its fit), and the journal's
// growth per channel-day. The figures are measured,
// not asserted (see the README's performance table).
func TestScaleChannels(t *testing.T) {
	bin := buildSettle(t)
	for _, n := range scaleSizes(t) {
		t.Run(fmt.Sprintf("%d", n), func(t *testing.T) { runScale(t, bin, n, scaleSpan(t)) })
	}
}

func runScale(t *testing.T, bin string, channels int, span time.Duration) {
	loggers := (channels + perLogger - 1) / perLogger
	dir := t.TempDir()
	addr := freeAddr(t)
	var cfg strings.Builder
	fmt.Fprintf(&cfg, "listen: %s\ndata_dir: %s\nloggers:\n", addr, dir)
	ptys := make([]*ptytest.PTY, loggers)
	for i := range ptys {
		ptys[i] = ptytest.Open(t)
		fmt.Fprintf(&cfg, "  - name: rack-%d\n    port: %s\n    line:\n      separator: \",\"\n      columns: [", i, ptys[i].Path())
		for c := range perLogger {
			fmt.Fprintf(&cfg, "{index: %d, channel: s%d-%d}, ", c+1, i, c)
		}
		cfg.WriteString("]\n")
	}
	cfg.WriteString("channels:\n")
	for i := range loggers {
		for c := range perLogger {
			fmt.Fprintf(&cfg, "  - name: s%d-%d\n    targets: [{name: handling, celsius: 50, handling: true}]\n", i, c)
		}
	}
	path := filepath.Join(t.TempDir(), "settle.yaml")
	if err := os.WriteFile(path, []byte(cfg.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(bin, "run", "--config", path, "--log-level", "error")
	cmd.Stderr = os.Stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer func() {
		cmd.Process.Kill()
		cmd.Wait()
	}()
	base := "http://" + addr
	waitHealthy(t, base, 30*time.Second)
	idle := procPeakRSS(t, cmd.Process.Pid)
	stop := make(chan struct{})
	var wg sync.WaitGroup
	for i, p := range ptys {
		wg.Add(1)
		go func() { defer wg.Done(); feedLogger(p, i, stop) }()
	}
	// Measure over the second half of the span: the first half is start-up and the
	// placements (every channel jumps from the room to its specimen at once). The
	// forecasts' ages are sampled every 2 s while the lines flow.
	time.Sleep(span / 2)
	m0 := scrape(t, base)
	cpu0, at0 := procCPU(t, cmd.Process.Pid), time.Now()
	var ages, fitAges []float64
	missing := map[string]bool{}
	for time.Since(at0) < span/2 {
		time.Sleep(2 * time.Second)
		var resp exporter.ChannelsResponse
		getJSON(t, base+"/api/v1/channels", &resp)
		for _, c := range resp.Channels {
			missing[c.Name] = c.Forecast == nil
			if c.Forecast != nil {
				ages = append(ages, resp.GeneratedAt.Sub(c.Forecast.UpdatedAt).Seconds())
				fitAges = append(fitAges, resp.GeneratedAt.Sub(c.Forecast.FittedAt).Seconds())
			}
		}
	}
	cpu1, at1 := procCPU(t, cmd.Process.Pid), time.Now()
	close(stop)
	wg.Wait()
	for name, none := range missing {
		if none {
			t.Errorf("%d channels: %s has no forecast after %v", channels, name, span)
		}
	}
	if len(missing) != channels {
		t.Fatalf("%d channels: the API lists %d", channels, len(missing))
	}
	m := scrape(t, base)
	for _, cause := range []string{dropAnalysis, dropJournal} {
		if v := m[fmt.Sprintf(`settle_readings_dropped_total{cause="%s"}`, cause)]; v != 0 {
			t.Errorf("%d channels: %v readings dropped (%s)", channels, v, cause)
		}
	}
	if len(ages) == 0 {
		t.Fatalf("%d channels: no forecast in the %v measured (a span too short for the first fits?)", channels, span/2)
	}
	slices.Sort(ages)
	slices.Sort(fitAges)
	window := at1.Sub(at0).Seconds()
	core := (cpu1 - cpu0) / window
	fits := (m["settle_fit_runs_total"] - m0["settle_fit_runs_total"]) / window
	busy := (m["settle_fit_seconds_total"] - m0["settle_fit_seconds_total"]) / window
	peak := procPeakRSS(t, cmd.Process.Pid)
	// The journal's growth: stop the daemon (its last commit and checkpoint), then
	// the files' size over the empty journal's, per reading, scaled to a day at 1 Hz.
	cmd.Process.Signal(syscall.SIGTERM)
	cmd.Wait()
	perDay := (checkpointedBytes(t, dir) - checkpointedBytes(t, t.TempDir())) /
		(m["settle_journal_committed_readings_total"] + m["settle_journal_pending_readings"]) * 86400
	t.Logf("%d channels at 1 Hz (ambient fitted), %v: daemon CPU %.2f of a core; %.0f fits a second (%.3f per channel-second; the fit workers busy %.2f of the time each, waiting for the CPU included); peak memory %.0f MB (%.0f MB idle, so %.2f MB a channel); forecast age (the newest reading it reflects, updated_at) median %.1f s, 90th percentile %.1f s, max %.1f s; fit age (fitted_at; fits every 5, 10 or 30 s of readings) median %.1f s, 90th percentile %.1f s, max %.1f s; journal %.2f MB per channel-day",
		channels, span, core, fits, fits/float64(channels), busy/float64(runtime.GOMAXPROCS(0)), peak/1e6, idle/1e6, (peak-idle)/1e6/float64(channels), ages[len(ages)/2], ages[len(ages)*9/10], ages[len(ages)-1],
		fitAges[len(fitAges)/2], fitAges[len(fitAges)*9/10], fitAges[len(fitAges)-1], perDay/1e6)
}

// feedLogger sends one line a second on p, one value per column: logger i's channels
// cool from the room (22 °C for 5 s) from 120–300 °C with time constants of 5–40 min.
func feedLogger(p *ptytest.PTY, i int, stop <-chan struct{}) {
	tick := time.NewTicker(time.Second)
	defer tick.Stop()
	start := time.Now()
	for {
		select {
		case <-stop:
			return
		case now := <-tick.C:
			s := now.Sub(start).Seconds()
			vals := make([]string, perLogger)
			for c := range perLogger {
				v := 22.0
				if s > 5 {
					k := float64(i*perLogger + c)
					hot, tau := 120+math.Mod(k*37, 180), 300+math.Mod(k*211, 2100)
					v = 22 + (hot-22)*math.Exp(-(s-5)/tau)
				}
				vals[c] = strconv.FormatFloat(v, 'f', 2, 64)
			}
			p.Master.SetWriteDeadline(time.Now().Add(time.Second))
			if _, err := fmt.Fprintf(p.Master, "%s\n", strings.Join(vals, ",")); err != nil {
				return
			}
		}
	}
}

// waitHealthy waits until base answers /healthz with the journal replay done.
func waitHealthy(t *testing.T, base string, limit time.Duration) {
	t.Helper()
	for end := time.Now().Add(limit); time.Now().Before(end); time.Sleep(100 * time.Millisecond) {
		r, err := http.Get(base + "/healthz")
		if err == nil {
			r.Body.Close()
			if r.StatusCode == http.StatusOK {
				return
			}
		}
	}
	t.Fatalf("%s/healthz did not answer within %v", base, limit)
}

// procCPU returns the user plus system CPU seconds of process pid (/proc/pid/stat).
func procCPU(t *testing.T, pid int) float64 {
	t.Helper()
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		t.Fatal(err)
	}
	// Fields after the command's closing parenthesis: utime and stime are the 12th and
	// 13th (proc(5): fields 14 and 15 of the line), in clock ticks (100 a second on Linux).
	f := strings.Fields(string(b[strings.LastIndexByte(string(b), ')')+1:]))
	ut, _ := strconv.ParseFloat(f[11], 64)
	st, _ := strconv.ParseFloat(f[12], 64)
	return (ut + st) / 100
}

// procPeakRSS returns the peak resident memory of process pid in bytes (VmHWM).
func procPeakRSS(t *testing.T, pid int) float64 {
	t.Helper()
	f, err := os.Open(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if rest, ok := strings.CutPrefix(sc.Text(), "VmHWM:"); ok {
			kb, _ := strconv.ParseFloat(strings.TrimSuffix(strings.TrimSpace(rest), " kB"), 64)
			return kb * 1024
		}
	}
	t.Fatal("no VmHWM in /proc status")
	return 0
}

// checkpointedBytes opens (or creates) the journal in dir and closes it, which folds its
// write-ahead log into the database, and returns the database file's size: what the
// record takes on disk for good.
func checkpointedBytes(t *testing.T, dir string) float64 {
	t.Helper()
	j, err := journal.Open(dir, journal.Options{Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	path := j.Path()
	if err := j.Close(); err != nil {
		t.Fatal(err)
	}
	info, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	return float64(info.Size())
}
