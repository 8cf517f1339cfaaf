package main

import (
	"bufio"
	"context"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
	"github.com/settle-lab/settle/daq"
)

// demoParser parses lines as the demo configuration tells the daemon to.
func demoParser(t *testing.T) *daq.LineParser {
	t.Helper()
	lg := sim.DemoScenario().DemoConfig("/dev/null").Loggers[0]
	p, err := daq.NewLineParser(lg.Name, lg.Line)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func TestSimToStdout(t *testing.T) {
	tests := []struct {
		args      []string
		lines     int           // data lines
		lastClock time.Duration // logger time of the last line
	}{
		{[]string{"--duration", "1m", "--speed", "0"}, 31, time.Minute},
		{[]string{"--duration", "1m", "--speed", "0", "--interval", "5s"}, 13, time.Minute},
		{[]string{"--duration", "20s", "--speed", "400", "--seed", "9"}, 11, 20 * time.Second},
	}
	for _, tc := range tests {
		out, _, err := execute(t, append([]string{"sim"}, tc.args...)...)
		if err != nil {
			t.Fatalf("%v: %v", tc.args, err)
		}
		lines := strings.Split(strings.TrimSuffix(out, "\n"), "\n")
		if len(lines) != 1+tc.lines || !strings.HasPrefix(lines[0], "# t_s,steel-cyl-a,") {
			t.Fatalf("%v: %d lines starting %q, want header + %d", tc.args, len(lines), lines[0], tc.lines)
		}
		p := demoParser(t)
		t0 := time.Unix(1_700_000_000, 0)
		var last []daq.Reading
		for _, l := range lines {
			rs, err := p.Parse([]byte(l), t0)
			if err != nil {
				t.Fatalf("%v: line %q: %v", tc.args, l, err)
			}
			if len(rs) > 0 {
				last = rs
			}
		}
		if len(last) != 5 || last[0].Time.Sub(t0) != tc.lastClock || !last[0].OK() || last[0].Celsius >= 850 {
			t.Errorf("%v: last line %+v, want 5 readings at +%v with the steel below 850 °C", tc.args, last, tc.lastClock)
		}
	}
}

func TestSimReplay(t *testing.T) {
	out, _, err := execute(t, "sim", "--replay", filepath.Join("..", "..", "testdata", "daq", "replay-small.csv"), "--speed", "0")
	if err != nil {
		t.Fatal(err)
	}
	want := "# t_s,replay,replay-ambient\n0.0,98.2,22.0\n60.0,94.4,\n120.0,,22.1\n180.0,89.1,22.1\n240.0,87.0,22.0\n"
	if out != want {
		t.Errorf("replay output:\n%s\nwant:\n%s", out, want)
	}
}

func TestSimFlagErrors(t *testing.T) {
	tests := []struct {
		args []string
		want string
	}{
		{[]string{"--speed", "-1"}, "sim: --speed -1: must be 0 (as fast as possible) or positive"},
		{[]string{"--interval", "0s"}, "sim: --interval 0s: must be positive"},
		{[]string{"--link", "/tmp/x"}, "sim: --link needs --pty"},
		{[]string{"--replay", "/nonexistent/run.csv"}, "sim: open replay: open /nonexistent/run.csv: no such file or directory"},
	}
	for _, tc := range tests {
		_, _, err := execute(t, append([]string{"sim"}, tc.args...)...)
		if err == nil || err.Error() != tc.want {
			t.Errorf("%v: err = %v, want %q", tc.args, err, tc.want)
		}
	}
}

// TestSimPTY serves the simulator on a pseudo-terminal behind --link, reads it with the
// line source through the link and stops it by cancelling (as SIGINT would).
func TestSimPTY(t *testing.T) {
	link := filepath.Join(t.TempDir(), "rack2-tty")
	pr, pw := io.Pipe()
	root := newRootCmd()
	root.SetArgs([]string{"sim", "--pty", "--link", link, "--speed", "600"})
	root.SetOut(pw)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	done := make(chan error, 1)
	go func() { done <- root.ExecuteContext(ctx); pw.Close() }()

	path, err := bufio.NewReader(pr).ReadString('\n')
	if err != nil {
		t.Fatalf("no device path on stdout: %v", err)
	}
	if target, err := os.Readlink(link); err != nil || target != strings.TrimSpace(path) {
		t.Fatalf("link %s -> %q (%v), want the printed path %q", link, target, err, path)
	}
	lg := sim.DemoScenario().DemoConfig(link).Loggers[0]
	src, err := daq.NewLineSource(lg.Logger, nil)
	if err != nil {
		t.Fatal(err)
	}
	out := make(chan daq.Reading, 64)
	go src.Run(ctx, out)
	seen := map[string]bool{}
	for len(seen) < 5 {
		select {
		case r := <-out:
			seen[r.Channel] = true
		case <-time.After(10 * time.Second):
			t.Fatalf("readings arrived only for %v", seen)
		}
	}
	cancel()
	select {
	case err := <-done:
		if err != nil {
			t.Errorf("sim --pty after cancel: %v", err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("sim --pty did not stop after cancel")
	}
	if _, err := os.Lstat(link); !os.IsNotExist(err) {
		t.Errorf("link %s still there after stop (%v)", link, err)
	}
}
