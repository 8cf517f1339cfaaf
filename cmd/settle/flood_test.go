package main

import (
	"bufio"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"os"
	"os/exec"
	"syscall"
	"testing"
	"time"

	"context"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/ptytest"
)

// floodEnv makes the test binary a flood client (see TestFloodClientHelper).
const floodEnv = "SETTLE_TEST_FLOOD_ADDR"

// TestFloodClientHelper is not a test: run as a child process with floodEnv set, it
// opens 2,000 keep-alive connections to that address, each after one GET /healthz,
// prints how many it holds, and keeps them until its stdin closes.
func TestFloodClientHelper(t *testing.T) {
	addr := os.Getenv(floodEnv)
	if addr == "" {
		t.Skip("helper process for TestPortReopensUnderConnectionFlood")
	}
	var lim syscall.Rlimit
	if syscall.Getrlimit(syscall.RLIMIT_NOFILE, &lim) == nil && lim.Cur < 2100 {
		lim.Cur = min(lim.Max, 4096)
		syscall.Setrlimit(syscall.RLIMIT_NOFILE, &lim)
	}
	var held []net.Conn
	for range 2000 {
		c, err := net.Dial("tcp", addr)
		if err != nil {
			fmt.Printf("dial: %v\n", err)
			break
		}
		fmt.Fprintf(c, "GET /healthz HTTP/1.1\r\nHost: x\r\n\r\n")
		held = append(held, c) // the response is never read: the client just stays
	}
	fmt.Printf("holding %d\n", len(held))
	io.Copy(io.Discard, os.Stdin)
}

// TestPortReopensUnderConnectionFlood holds 2,000 idle HTTP connections from another
// process, opened while the logger's adapter is pulled (so they could take the port's
// low descriptors), then plugs it back: the port must be read again within 2 s, and
// /healthz must answer.
func TestPortReopensUnderConnectionFlood(t *testing.T) {
	link := ptytest.NewLink(t)
	cfg := config.Config{Listen: "127.0.0.1:0", DataDir: t.TempDir(),
		Loggers:  []config.Logger{{Logger: daq.Logger{Name: "rack", Port: link.Path, Format: "line", Line: daq.LineFormat{Columns: []daq.Column{{Index: 1, Channel: "plate-1"}}}}}},
		Channels: []config.Channel{{Name: "plate-1"}}}
	d, err := newDaemon(&cfg, slog.New(slog.NewTextHandler(io.Discard, nil)))
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	defer func() { cancel(); <-done }()

	time.Sleep(300 * time.Millisecond)
	link.Unplug() // the port's descriptors are free now: the flood may take them
	time.Sleep(300 * time.Millisecond)
	flood := exec.Command(os.Args[0], "-test.run=^TestFloodClientHelper$")
	flood.Env = append(os.Environ(), floodEnv+"="+d.Addr())
	stdin, _ := flood.StdinPipe()
	out, _ := flood.StdoutPipe()
	if err := flood.Start(); err != nil {
		t.Fatal(err)
	}
	defer func() { stdin.Close(); flood.Wait() }()
	line, _ := bufio.NewReader(out).ReadString('\n')
	if line != "holding 2000\n" {
		t.Fatalf("flood client: %q, want holding 2000", line)
	}

	p := link.Replug()
	replugged := time.Now()
	var seen bool
	for time.Since(replugged) < 2*time.Second && !seen {
		fmt.Fprintf(p.Master, "%.1f\n", 123.4)
		time.Sleep(50 * time.Millisecond)
		r, ok := d.latest.Get("plate-1")
		seen = ok && r.Celsius == 123.4
	}
	if !seen {
		t.Fatalf("port not read again within 2 s of the replug with 2,000 idle connections held (server holds %d)", d.srv.OpenConns())
	}
	t.Logf("port read again %v after the replug; server holds %d connections", time.Since(replugged).Round(time.Millisecond), d.srv.OpenConns())
	client := &http.Client{Timeout: 5 * time.Second}
	resp, err := client.Get("http://" + d.Addr() + "/healthz")
	if err != nil {
		t.Fatalf("/healthz under the flood: %v", err)
	}
	resp.Body.Close()
}
