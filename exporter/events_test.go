package exporter

import (
	"bufio"
	"encoding/json"
	"github.com/settle-lab/settle/internal/httpjson"
	"net"
	"net/http"
	"net/http/httptest"
	"strings"
	"syscall"
	"testing"
	"time"
)

// idleStreamClient opens the event stream over a raw TCP connection from 127.0.0.1 with
// a small receive buffer, and never reads: the hostile neighbour of issue 15.
func idleStreamClient(t *testing.T, addr string) net.Conn {
	t.Helper()
	d := net.Dialer{Control: func(_, _ string, c syscall.RawConn) error {
		var serr error
		err := c.Control(func(fd uintptr) {
			serr = syscall.SetsockoptInt(int(fd), syscall.SOL_SOCKET, syscall.SO_RCVBUF, 4096)
		})
		if err != nil {
			return err
		}
		return serr
	}}
	conn, err := d.Dial("tcp", addr)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { conn.Close() })
	if _, err := conn.Write([]byte("GET /api/v1/events HTTP/1.1\r\nHost: settle\r\n\r\n")); err != nil {
		t.Fatal(err)
	}
	return conn
}

// clientFrom is an HTTP client whose connections leave from the loopback address ip
// (Linux answers on all of 127.0.0.0/8).
func clientFrom(ip string) *http.Client {
	d := &net.Dialer{LocalAddr: &net.TCPAddr{IP: net.ParseIP(ip)}}
	return &http.Client{Transport: &http.Transport{DialContext: d.DialContext}}
}

// waitFor polls cond every 10 ms for up to 20 s: a liveness bound, not a timing claim.
func waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	for deadline := time.Now().Add(20 * time.Second); !cond(); time.Sleep(10 * time.Millisecond) {
		if time.Now().After(deadline) {
			t.Fatalf("gave up waiting: %s", what)
		}
	}
}

// Thirty-two clients on one address that open the stream and never read cannot close it
// to everyone else: only DefaultMaxStreamsPerAddr of them get a stream, a client from
// another address is served throughout, and once their connections' buffers are full
// the idle ones are dropped after the write deadline (set short here), freeing their
// slots. The events are made large so the buffers fill in a few megabytes.
func TestIdleStreamClientsCannotCloseTheStream(t *testing.T) {
	h := newTestHandler(curveState(), Options{StreamWriteTimeout: 200 * time.Millisecond, Heartbeat: time.Hour})
	addr := serve(t, NewServer(h, ServerOptions{}))
	for range 32 {
		idleStreamClient(t, addr)
	}
	waitFor(t, "the idle clients to take their streams", func() bool { return h.broker.n.Load() == DefaultMaxStreamsPerAddr })

	// One more from the same address: refused with the JSON error, 429.
	resp, err := clientFrom("127.0.0.1").Get("http://" + addr + "/api/v1/events")
	if err != nil {
		t.Fatal(err)
	}
	var e httpjson.Error
	_ = json.NewDecoder(resp.Body).Decode(&e)
	resp.Body.Close()
	if resp.StatusCode != http.StatusTooManyRequests || !strings.Contains(e.Error, "from this address") {
		t.Errorf("a fifth stream from 127.0.0.1: %d %q, want 429 naming the address limit", resp.StatusCode, e.Error)
	}

	// Another address is served.
	other, err := clientFrom("127.0.0.2").Get("http://" + addr + "/api/v1/events")
	if err != nil {
		t.Fatalf("stream from 127.0.0.2: %v", err)
	}
	defer other.Body.Close()
	if other.StatusCode != http.StatusOK {
		t.Fatalf("stream from 127.0.0.2: %d, want 200", other.StatusCode)
	}
	sc := bufio.NewScanner(other.Body)
	sc.Buffer(make([]byte, 1<<20), 1<<20)
	st := sse{sc}
	if name, _ := st.next(t); name != "channels" {
		t.Fatalf("first event from 127.0.0.2: %q", name)
	}

	// 40 events of 256 KiB (10 MiB per client) fill any loopback buffers.
	big := strings.Repeat("x", 256<<10)
	got := make(chan int, 1)
	go func() { // counts whole events; st.next would call t.Fatal off the test goroutine
		n, name := 0, ""
		for n < 41 && sc.Scan() {
			line := sc.Text()
			switch {
			case strings.HasPrefix(line, "event: "):
				name = line[len("event: "):]
			case name == "filler" && strings.HasPrefix(line, "data: ") && len(line) > len(big),
				name == "marker" && strings.HasPrefix(line, "data: "):
				n++
			}
		}
		got <- n
	}()
	for range 40 {
		h.broker.publish("filler", map[string]string{"x": big})
	}
	waitFor(t, "the idle clients to be dropped", func() bool { return h.broker.n.Load() == 1 })
	if n := h.broker.timedOut.Load(); n != DefaultMaxStreamsPerAddr {
		t.Errorf("clients dropped at the write deadline = %d, want the %d idle ones", n, DefaultMaxStreamsPerAddr)
	}
	h.broker.publish("marker", map[string]string{})
	select {
	case n := <-got:
		if n != 41 {
			t.Errorf("127.0.0.2 got %d of the 41 events", n)
		}
	case <-time.After(20 * time.Second):
		t.Fatal("127.0.0.2 stopped getting events")
	}
	// The counts are on /metrics: 28 idle clients and the fifth request refused on the
	// address limit, the 4 idle streams dropped at the deadline.
	waitFor(t, "every idle client's request to be answered", func() bool { return h.broker.refused[1].Load() == 29 })
	metrics := do(t, h, "GET", "/metrics", "", "").Body.String()
	for _, line := range []string{
		`settle_event_stream_refused_total{cause="address_limit"} 29`,
		`settle_event_stream_refused_total{cause="limit"} 0`,
		`settle_event_stream_dropped_total{cause="write_timeout"} 4`,
		`settle_event_stream_dropped_total{cause="behind"} 0`,
	} {
		if !strings.Contains(metrics, line+"\n") {
			t.Errorf("/metrics lacks %s", line)
		}
	}
	// The freed slots take new clients from the first address.
	again, err := clientFrom("127.0.0.1").Get("http://" + addr + "/api/v1/events")
	if err != nil {
		t.Fatal(err)
	}
	again.Body.Close()
	if again.StatusCode != http.StatusOK {
		t.Errorf("a stream from 127.0.0.1 after the idle ones were dropped: %d, want 200", again.StatusCode)
	}
}

func TestRemoteHost(t *testing.T) {
	for _, c := range []struct{ remote, want string }{
		{"127.0.0.1:51234", "127.0.0.1"},
		{"[::ffff:192.0.2.7]:80", "192.0.2.7"}, // IPv4-mapped: the IPv4 address
		{"[2001:db8:1:2:aaaa::1]:80", "2001:db8:1:2::/64"},
		{"[2001:db8:1:2:bbbb::9]:81", "2001:db8:1:2::/64"}, // same /64, same count
		{"[fe80::1%eth0]:8391", "fe80::/64"},
		{"@", "@"}, // a Unix socket's peer: taken whole
	} {
		r := httptest.NewRequest("GET", "/api/v1/events", nil)
		r.RemoteAddr = c.remote
		if got := remoteHost(r); got != c.want {
			t.Errorf("remoteHost(%q) = %q, want %q", c.remote, got, c.want)
		}
	}
}
