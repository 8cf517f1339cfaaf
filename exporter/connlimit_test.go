package exporter

import (
	"bufio"
	"fmt"
	"net"
	"net/http"
	"testing"
	"time"
)

// idleConn opens a keep-alive connection, makes one GET /healthz on it and leaves it
// idle, as a client that never leaves does.
func idleConn(t *testing.T, addr string) net.Conn {
	t.Helper()
	c, err := net.Dial("tcp", addr)
	if err != nil {
		t.Fatal(err)
	}
	fmt.Fprintf(c, "GET /healthz HTTP/1.1\r\nHost: x\r\n\r\n")
	_ = c.SetReadDeadline(time.Now().Add(10 * time.Second)) // hang guard only
	resp, err := http.ReadResponse(bufio.NewReader(c), nil)
	if err != nil {
		t.Fatalf("idle client: %v", err)
	}
	resp.Body.Close()
	return c
}

// Clients that connect and stay idle never hold more than MaxConns connections, and
// never lock out /healthz and /metrics.
func TestIdleConnectionsCannotLockOut(t *testing.T) {
	srv := NewServer(newTestHandler(curveState(), Options{}), ServerOptions{MaxConns: 8})
	addr := serve(t, srv)
	var held []net.Conn
	defer func() {
		for _, c := range held {
			c.Close()
		}
	}()
	for range 40 {
		held = append(held, idleConn(t, addr))
	}
	for range 20 { // and some that send nothing at all
		c, err := net.Dial("tcp", addr)
		if err != nil {
			t.Fatal(err)
		}
		held = append(held, c)
	}
	for _, path := range []string{"/healthz", "/metrics"} {
		client := &http.Client{Timeout: 5 * time.Second}
		resp, err := client.Get("http://" + addr + path)
		if err != nil {
			t.Fatalf("GET %s with %d idle clients: %v", path, len(held), err)
		}
		resp.Body.Close()
		if resp.StatusCode != http.StatusOK {
			t.Errorf("GET %s: %s", path, resp.Status)
		}
		client.CloseIdleConnections()
	}
	if n := srv.OpenConns(); n > 8 {
		t.Errorf("server holds %d connections, want at most 8", n)
	}
}
