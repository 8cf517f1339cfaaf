package exporter

import (
	"encoding/json"
	"fmt"
	"net/http"
	"sync"
	"sync/atomic"
	"time"

	"github.com/settle-lab/settle/exporter/jsonval"

	"github.com/settle-lab/settle/daq"
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
	// streamWriteTimeout bounds each write to a stream client.
	streamWriteTimeout = 10 * time.Second
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
	mu      sync.Mutex
	clients map[*client]struct{}
	buffer  int
	max     int
	n       atomic.Int32 // clients, read without the lock by publishers
	dropped atomic.Uint64
	closing chan struct{}
	closed  sync.Once
}

type client struct {
	ch   chan event
	gone chan struct{} // closed when the broker drops the client
}

func newBroker(buffer, maxClients int) *broker {
	return &broker{clients: map[*client]struct{}{}, buffer: buffer, max: maxClients, closing: make(chan struct{})}
}

// join adds a client; false when the broker is full.
func (b *broker) join() (*client, bool) {
	b.mu.Lock()
	defer b.mu.Unlock()
	if len(b.clients) >= b.max {
		return nil, false
	}
	c := &client{ch: make(chan event, b.buffer), gone: make(chan struct{})}
	b.clients[c] = struct{}{}
	b.n.Store(int32(len(b.clients)))
	return c, true
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

// serveEvents streams server-sent events: "channels" (the full list) on connect, then
// "reading", "forecast" (a channel whose fit or target states changed), "fault" and
// "heartbeat".
func (h *Handler) serveEvents(w http.ResponseWriter, r *http.Request) {
	c, ok := h.broker.join()
	if !ok {
		writeError(w, http.StatusServiceUnavailable, "too many event-stream clients; try again later")
		return
	}
	defer h.broker.leave(c)
	rc := http.NewResponseController(w)
	w.Header().Set("Content-Type", "text/event-stream")
	w.Header().Set("Cache-Control", "no-store")
	w.Header().Set("X-Accel-Buffering", "no")
	w.WriteHeader(http.StatusOK)
	send := func(ev event) bool {
		_ = rc.SetWriteDeadline(time.Now().Add(streamWriteTimeout))
		if _, err := fmt.Fprintf(w, "event: %s\ndata: %s\n\n", ev.name, ev.data); err != nil {
			return false
		}
		return rc.Flush() == nil
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
