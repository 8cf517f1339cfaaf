package exporter

import (
	"encoding/json"
	"errors"
	"fmt"
	"net"
	"net/http"
	"net/netip"
	"os"
	"sync"
	"sync/atomic"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/internal/jsonval"
)

// Event stream defaults.
const (
	// DefaultHeartbeat is how often an idle event stream sends a heartbeat event.
	DefaultHeartbeat = 15 * time.Second
	// DefaultClientBuffer is how many events a stream client may fall behind before it
	// is dropped.
	DefaultClientBuffer = 512
	// DefaultMaxStreams caps the event-stream clients served at once.
	DefaultMaxStreams = 32
	// DefaultMaxStreamsPerAddr caps the event-stream clients served at once to one
	// remote address (IP), so one machine's clients cannot take every stream.
	DefaultMaxStreamsPerAddr = 4
	// DefaultStreamWriteTimeout bounds each write to a stream client: a client that has
	// not taken an event within it (its connection's buffers full) is dropped.
	DefaultStreamWriteTimeout = 10 * time.Second
)

// event is one server-sent event, its data already encoded.
type event struct {
	name string
	data []byte
}

// ReadingEvent is the data of a "reading" event.
type ReadingEvent struct {
	Channel string    `json:"channel"`
	Time    time.Time `json:"time"`
	Celsius *float64  `json:"celsius"`
	Status  string    `json:"status"`
}

// FaultEvent is the data of a "fault" event; Fault is null when the channel recovers.
type FaultEvent struct {
	Channel string     `json:"channel"`
	Fault   *FaultJSON `json:"fault"`
}

// broker fans events out to stream clients. Publishing never blocks: a client whose
// buffer is full is dropped, and its stream ends.
type broker struct {
	mu       sync.Mutex
	clients  map[*client]struct{}
	perAddr  map[string]int // clients by remote address
	buffer   int
	max      int
	maxAddr  int
	n        atomic.Int32     // clients, read without the lock by publishers
	dropped  atomic.Uint64    // clients dropped for falling a buffer behind
	timedOut atomic.Uint64    // clients dropped for a write past the deadline
	refused  [2]atomic.Uint64 // clients refused: [0] over the limit in all, [1] per address
	closing  chan struct{}
	closed   sync.Once
}

type client struct {
	ch   chan event
	gone chan struct{} // closed when the broker drops the client
	addr string
}

func newBroker(buffer, maxClients, maxPerAddr int) *broker {
	return &broker{clients: map[*client]struct{}{}, perAddr: map[string]int{}, buffer: buffer,
		max: maxClients, maxAddr: maxPerAddr, closing: make(chan struct{})}
}

// Why join refused a client.
var (
	errBrokerFull = errors.New("too many event-stream clients; try again later")
	errAddrFull   = errors.New("too many event-stream clients from this address; close one or try again later")
)

// join adds a client from the remote address addr; an error when the broker or the
// address is full.
func (b *broker) join(addr string) (*client, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	switch {
	case b.perAddr[addr] >= b.maxAddr:
		b.refused[1].Add(1)
		return nil, errAddrFull
	case len(b.clients) >= b.max:
		b.refused[0].Add(1)
		return nil, errBrokerFull
	}
	c := &client{ch: make(chan event, b.buffer), gone: make(chan struct{}), addr: addr}
	b.clients[c] = struct{}{}
	b.perAddr[addr]++
	b.n.Store(int32(len(b.clients)))
	return c, nil
}

// leave removes c (idempotent).
func (b *broker) leave(c *client) {
	b.mu.Lock()
	defer b.mu.Unlock()
	b.remove(c)
}

func (b *broker) remove(c *client) {
	if _, ok := b.clients[c]; ok {
		delete(b.clients, c)
		if b.perAddr[c.addr]--; b.perAddr[c.addr] <= 0 {
			delete(b.perAddr, c.addr)
		}
		close(c.gone)
		b.n.Store(int32(len(b.clients)))
	}
}

// publish sends an event to every client, dropping those that are full.
func (b *broker) publish(name string, v any) {
	if b.n.Load() == 0 {
		return
	}
	data, err := json.Marshal(v)
	if err != nil {
		return // only NaN could cause this, and every float is filtered through num
	}
	ev := event{name: name, data: data}
	b.mu.Lock()
	defer b.mu.Unlock()
	for c := range b.clients {
		select {
		case c.ch <- ev:
		default:
			b.remove(c)
			b.dropped.Add(1)
		}
	}
}

// close ends every stream (at server shutdown).
func (b *broker) close() { b.closed.Do(func() { close(b.closing) }) }

func readingEvent(r daq.Reading) ReadingEvent {
	ev := ReadingEvent{Channel: r.Channel, Time: r.Time.UTC(), Status: r.Status.String()}
	if r.OK() {
		ev.Celsius = jsonval.Num(r.Celsius)
	}
	return ev
}

// remoteHost is the address a request's peer is counted under for the per-address
// stream limit: its IPv4 address, or the /64 network of an IPv6 one (one host usually
// holds a whole /64); the whole RemoteAddr when it is neither.
func remoteHost(r *http.Request) string {
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		host = r.RemoteAddr
	}
	ip, err := netip.ParseAddr(host)
	switch {
	case err != nil:
		return host
	case ip.Is4() || ip.Is4In6():
		return ip.Unmap().String()
	}
	p, _ := ip.WithZone("").Prefix(64)
	return p.String()
}

// streamCollector exports the broker's counts of dropped and refused stream clients.
type streamCollector struct {
	b       *broker
	dropped *prometheus.Desc
	refused *prometheus.Desc
}

func newStreamCollector(b *broker) streamCollector {
	return streamCollector{b: b,
		dropped: prometheus.NewDesc("settle_event_stream_dropped_total",
			"Event-stream clients dropped: cause behind (fell the client buffer behind) or write_timeout (took no write within the deadline).", []string{"cause"}, nil),
		refused: prometheus.NewDesc("settle_event_stream_refused_total",
			"Event-stream clients refused: cause limit (streams in all) or address_limit (streams from one address).", []string{"cause"}, nil)}
}

// Describe sends both descriptors.
func (s streamCollector) Describe(out chan<- *prometheus.Desc) { out <- s.dropped; out <- s.refused }

// Collect sends the four counters.
func (s streamCollector) Collect(out chan<- prometheus.Metric) {
	c := func(d *prometheus.Desc, n uint64, cause string) {
		out <- prometheus.MustNewConstMetric(d, prometheus.CounterValue, float64(n), cause)
	}
	c(s.dropped, s.b.dropped.Load(), "behind")
	c(s.dropped, s.b.timedOut.Load(), "write_timeout")
	c(s.refused, s.b.refused[0].Load(), "limit")
	c(s.refused, s.b.refused[1].Load(), "address_limit")
}

// serveEvents streams server-sent events: "channels" (the full list) on connect, then
// "reading", "forecast" (a channel whose fit or target states changed), "fault" and
// "heartbeat". A client is refused over the limit per address (429) or in all (503),
// and dropped when a write to it does not complete within Options.StreamWriteTimeout.
func (h *Handler) serveEvents(w http.ResponseWriter, r *http.Request) {
	c, err := h.broker.join(remoteHost(r))
	if err != nil {
		status := http.StatusServiceUnavailable
		if errors.Is(err, errAddrFull) {
			status = http.StatusTooManyRequests
		}
		w.Header().Set("Retry-After", "10")
		httpjson.WriteError(w, status, err.Error())
		return
	}
	defer h.broker.leave(c)
	rc := http.NewResponseController(w)
	w.Header().Set("Content-Type", "text/event-stream")
	w.Header().Set("Cache-Control", "no-store")
	w.Header().Set("X-Accel-Buffering", "no")
	w.WriteHeader(http.StatusOK)
	send := func(ev event) bool {
		_ = rc.SetWriteDeadline(time.Now().Add(h.opt.StreamWriteTimeout))
		_, err := fmt.Fprintf(w, "event: %s\ndata: %s\n\n", ev.name, ev.data)
		if err == nil {
			err = rc.Flush()
		}
		if errors.Is(err, os.ErrDeadlineExceeded) {
			h.broker.timedOut.Add(1)
		}
		return err == nil
	}
	first, _ := json.Marshal(h.channels(time.Now()))
	if !send(event{name: "channels", data: first}) {
		return
	}
	beat := time.NewTicker(h.opt.Heartbeat)
	defer beat.Stop()
	for {
		select {
		case ev := <-c.ch:
			if !send(ev) {
				return
			}
		case t := <-beat.C:
			if !send(event{name: "heartbeat", data: fmt.Appendf(nil, `{"time":%q}`, t.UTC().Format(time.RFC3339))}) {
				return
			}
		case <-c.gone:
			return
		case <-h.broker.closing:
			return
		case <-r.Context().Done():
			return
		}
	}
}
