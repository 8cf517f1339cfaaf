package notify

import (
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"math"
	"net/http"
	"net/http/httptest"
	"sync"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil"
)

// receiver is a webhook endpoint that fails the first failFirst requests with 503 and
// records the events it accepts.
type receiver struct {
	mu        sync.Mutex
	failFirst int
	status    int // answer after the failures (default 204)
	requests  int
	events    []Event
	ids       []string
	got       chan struct{}
}

func newReceiver(failFirst int) *receiver {
	return &receiver{failFirst: failFirst, status: http.StatusNoContent, got: make(chan struct{}, 100)}
}

func (rv *receiver) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	rv.mu.Lock()
	defer rv.mu.Unlock()
	rv.requests++
	if rv.requests <= rv.failFirst {
		http.Error(w, "busy", http.StatusServiceUnavailable)
		return
	}
	if r.Header.Get("Content-Type") != "application/json" {
		http.Error(w, "want JSON", http.StatusUnsupportedMediaType)
		return
	}
	var ev Event
	body, _ := io.ReadAll(r.Body)
	if err := json.Unmarshal(body, &ev); err != nil {
		http.Error(w, err.Error(), http.StatusBadRequest)
		return
	}
	rv.events = append(rv.events, ev)
	rv.ids = append(rv.ids, r.Header.Get("X-Settle-Event-Id"))
	w.WriteHeader(rv.status)
	rv.got <- struct{}{}
}

func (rv *receiver) snapshot() (int, []Event, []string) {
	rv.mu.Lock()
	defer rv.mu.Unlock()
	return rv.requests, append([]Event(nil), rv.events...), append([]string(nil), rv.ids...)
}

var seg = time.Date(2026, 3, 4, 10, 0, 0, 0, time.UTC)

// plate is a channel whose handling target is predicted at seg+40 min.
func plate(now time.Time, state string) Channel {
	return Channel{Name: "plate", Now: now, Celsius: 61.2, Segment: seg, Targets: []Target{{
		Name: "handling", State: state, Handling: true, Celsius: 50,
		At: seg.Add(40 * time.Minute), Earliest: seg.Add(37 * time.Minute), Latest: seg.Add(44 * time.Minute),
		Due: seg.Add(44 * time.Minute), // a handling target plans with the late bound
	}}}
}

func start(t *testing.T, hooks []Webhook, opt Options) (*Notifier, *prometheus.Registry) {
	t.Helper()
	reg := prometheus.NewPedanticRegistry()
	opt.Registerer = reg
	opt.Log = slog.New(slog.NewTextHandler(io.Discard, nil))
	if opt.Backoff == 0 {
		opt.Backoff = 5 * time.Millisecond
	}
	opt.Cautions = []string{"Verify with a contact thermometer."}
	n := New(hooks, opt)
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan struct{})
	go func() { n.Run(ctx); close(done) }()
	t.Cleanup(func() { cancel(); <-done })
	return n, reg
}

func waitEvents(t *testing.T, rv *receiver, n int) {
	t.Helper()
	for i := 0; i < n; i++ {
		select {
		case <-rv.got:
		case <-time.After(10 * time.Second): // a hang guard, not a speed assertion
			t.Fatalf("receiver got %d events, want %d", i, n)
		}
	}
}

func TestDeliveryRetriesAndNoDuplicates(t *testing.T) {
	rv := newReceiver(2) // the first two attempts fail with 503
	srv := httptest.NewServer(rv)
	defer srv.Close()
	n, reg := start(t, []Webhook{{Name: "bench", URL: srv.URL, LeadTime: 10 * time.Minute}}, Options{})

	// 35 min in: the forecast (40 min) is 5 min away, inside the 10 min lead time.
	for range 3 { // repeated polls of the same state must not repeat the event
		n.Observe([]Channel{plate(seg.Add(35*time.Minute), "predicted")})
	}
	waitEvents(t, rv, 1)
	reached := plate(seg.Add(41*time.Minute), "reached")
	reached.Targets[0].At = seg.Add(41 * time.Minute)
	for range 3 {
		n.Observe([]Channel{reached})
	}
	waitEvents(t, rv, 1)
	n.Observe([]Channel{reached}) // and once more after delivery
	time.Sleep(50 * time.Millisecond)

	requests, events, ids := rv.snapshot()
	if len(events) != 2 {
		t.Fatalf("events = %d, want 2 (soon, reached): %+v", len(events), events)
	}
	if requests != 4 {
		t.Errorf("requests = %d, want 4 (2 failed attempts + 2 deliveries)", requests)
	}
	soon, got := events[0], events[1]
	if soon.Kind != KindSoon || got.Kind != KindReached {
		t.Errorf("kinds = %s, %s; want soon, reached", soon.Kind, got.Kind)
	}
	if soon.ID != ids[0] || soon.ID != "plate/handling/soon/1772618400" {
		t.Errorf("soon id = %q (header %q), want plate/handling/soon/1772618400", soon.ID, ids[0])
	}
	if soon.Webhook != "bench" || soon.Channel != "plate" || soon.Target != "handling" ||
		soon.TargetCelsius == nil || *soon.TargetCelsius != 50 || len(soon.Cautions) != 1 {
		t.Errorf("soon event = %+v", soon)
	}
	// The lead time counts to the late bound (44 min), not the central estimate.
	if want := "plate is expected below handling (50.0 °C) by 10:44:00 UTC with high confidence, in about 9m0s (central estimate 10:40:00 UTC). This is an estimate: verify before handling."; soon.Message != want {
		t.Errorf("message = %q, want %q", soon.Message, want)
	}
	if got.At == nil || !got.At.Equal(seg.Add(41*time.Minute)) {
		t.Errorf("reached at = %v, want %v", got.At, seg.Add(41*time.Minute))
	}
	if v := testutil.ToFloat64(n.failed.WithLabelValues("bench")); v != 2 {
		t.Errorf("failures_total = %v, want 2", v)
	}
	if v := testutil.ToFloat64(n.sent.WithLabelValues("bench")); v != 2 {
		t.Errorf("sent_total = %v, want 2", v)
	}
	problems, err := testutil.GatherAndLint(reg)
	if err != nil || len(problems) > 0 {
		t.Errorf("lint: %v %v", err, problems)
	}
}

func TestNewSegmentRearmsAndFaultsOncePerEpisode(t *testing.T) {
	rv := newReceiver(0)
	srv := httptest.NewServer(rv)
	defer srv.Close()
	n, _ := start(t, []Webhook{{Name: "w", URL: srv.URL, Events: []string{"reached", "fault"}}}, Options{})

	ch := plate(seg.Add(41*time.Minute), "reached")
	n.Observe([]Channel{ch})
	ch.Segment = seg.Add(2 * time.Hour) // a new specimen on the same channel
	n.Observe([]Channel{ch})
	open := ch
	open.Fault, open.FaultDetail, open.FaultSince = "open", "open thermocouple", seg.Add(3*time.Hour)
	n.Observe([]Channel{open, open})
	n.Observe([]Channel{ch}) // recovered
	open.FaultSince = seg.Add(4 * time.Hour)
	n.Observe([]Channel{open}) // a second episode
	waitEvents(t, rv, 4)
	time.Sleep(50 * time.Millisecond)
	_, events, _ := rv.snapshot()
	var kinds []Kind
	for _, ev := range events {
		kinds = append(kinds, ev.Kind)
	}
	want := []Kind{KindReached, KindReached, KindFault, KindFault}
	if len(kinds) != len(want) {
		t.Fatalf("kinds = %v, want %v", kinds, want)
	}
	for i := range want {
		if kinds[i] != want[i] {
			t.Errorf("event %d kind = %s, want %s", i, kinds[i], want[i])
		}
	}
	if events[2].Fault != "open" || events[2].Message != "plate: fault open: open thermocouple" {
		t.Errorf("fault event = %+v", events[2])
	}
}

func TestEventSelectionAndLeadTime(t *testing.T) {
	rv := newReceiver(0)
	srv := httptest.NewServer(rv)
	defer srv.Close()
	// Only faults; and a lead time that would otherwise fire.
	n, _ := start(t, []Webhook{{Name: "faults", URL: srv.URL, LeadTime: time.Hour, Events: []string{"fault"}}}, Options{})
	n.Observe([]Channel{plate(seg.Add(35*time.Minute), "predicted"), plate(seg.Add(41*time.Minute), "reached")})
	time.Sleep(50 * time.Millisecond)
	if req, _, _ := rv.snapshot(); req != 0 {
		t.Errorf("a fault-only webhook got %d requests for target events", req)
	}
	// A forecast outside the lead time sends nothing either.
	rv2 := newReceiver(0)
	srv2 := httptest.NewServer(rv2)
	defer srv2.Close()
	n2, _ := start(t, []Webhook{{Name: "soon", URL: srv2.URL, LeadTime: 2 * time.Minute}}, Options{})
	n2.Observe([]Channel{plate(seg.Add(35*time.Minute), "predicted")})
	time.Sleep(50 * time.Millisecond)
	if req, _, _ := rv2.snapshot(); req != 0 {
		t.Errorf("forecast 5 min away with a 2 min lead time sent %d requests", req)
	}
}

func TestPermanentFailureIsNotRetried(t *testing.T) {
	rv := newReceiver(0)
	rv.status = http.StatusNoContent
	bad := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		rv.mu.Lock()
		rv.requests++
		rv.mu.Unlock()
		http.Error(w, "gone", http.StatusGone)
	}))
	defer bad.Close()
	n, _ := start(t, []Webhook{{Name: "bench", URL: bad.URL}}, Options{Attempts: 4})
	if q, err := n.Test("", seg); err != nil || q != 1 {
		t.Fatalf("Test = %d, %v", q, err)
	}
	if _, err := n.Test("nope", seg); err == nil {
		t.Error("Test of an unknown webhook gave no error")
	}
	waitGivenUp(t, n, "bench")
	if req, _, _ := rv.snapshot(); req != 1 {
		t.Errorf("requests = %d, want 1 (410 Gone is not retried)", req)
	}
}

func TestRetriesGiveUp(t *testing.T) {
	rv := newReceiver(1000)
	srv := httptest.NewServer(rv)
	defer srv.Close()
	n, _ := start(t, []Webhook{{Name: "bench", URL: srv.URL}}, Options{Attempts: 3})
	n.Test("bench", seg)
	waitGivenUp(t, n, "bench")
	if req, _, _ := rv.snapshot(); req != 3 {
		t.Errorf("requests = %d, want 3 attempts", req)
	}
	if v := testutil.ToFloat64(n.failed.WithLabelValues("bench")); v != 3 {
		t.Errorf("failures_total = %v, want 3", v)
	}
}

func TestNaNTemperatureIsOmitted(t *testing.T) {
	ch := plate(seg, "reached")
	ch.Celsius = math.NaN()
	h := &hook{kinds: kinds(nil), seen: map[string]map[string]bool{}, seg: map[string]time.Time{}, faults: map[string]string{}}
	evs := h.events(ch, nil)
	if len(evs) != 1 || evs[0].Celsius != nil {
		t.Fatalf("events = %+v, want one with no temperature", evs)
	}
	if _, err := json.Marshal(evs[0]); err != nil {
		t.Errorf("marshal: %v", err)
	}
}

func TestRedact(t *testing.T) {
	if got := redact("https://hooks.example/x?key=secret"); got != "https://hooks.example/x?…" {
		t.Errorf("redact = %q", got)
	}
}

// TestOnlyReadingsBackedStatesNotify: an empty position, an insufficient or an
// unreachable target sends nothing (never "reached"), and a handling target's "soon"
// waits for its due time (the interval's late end), not the central estimate.
func TestOnlyReadingsBackedStatesNotify(t *testing.T) {
	n, _ := start(t, []Webhook{{Name: "all", URL: "http://127.0.0.1:1/unused", LeadTime: 5 * time.Minute}}, Options{})
	h := n.hooks[0]
	for _, state := range []string{"empty", "insufficient", "unreachable"} {
		if evs := h.events(plate(seg.Add(41*time.Minute), state), nil); len(evs) != 0 {
			t.Errorf("state %s: events %+v, want none", state, evs)
		}
	}
	// 36 min in: the central estimate (40 min) is 4 min away, inside the 5 min lead,
	// but the due time (44 min) is 8 min away: no "soon" yet.
	if evs := h.events(plate(seg.Add(36*time.Minute), "predicted"), nil); len(evs) != 0 {
		t.Errorf("soon sent %d events 8 min before the due time", len(evs))
	}
	if evs := h.events(plate(seg.Add(40*time.Minute), "predicted"), nil); len(evs) != 1 || evs[0].Kind != KindSoon {
		t.Errorf("4 min before the due time: %+v, want one soon event", evs)
	}
}

// An open-ended handling forecast ("not before", no late end) has no time to plan
// with, so it never makes a "soon" event, even with a central estimate inside the
// lead time; a closed one plans with its late end, a temperature target with At.
func TestOpenEndedHandlingHasNoDue(t *testing.T) {
	at := seg.Add(time.Minute)
	for _, c := range []struct {
		name string
		tg   Target
		want time.Time
	}{
		{"open handling", Target{State: "predicted", Handling: true, At: at, Earliest: at}, time.Time{}},
		{"closed handling", Target{State: "predicted", Handling: true, At: at, Earliest: at, Latest: at.Add(time.Hour), Due: at.Add(time.Hour)}, at.Add(time.Hour)},
		{"open temperature", Target{State: "predicted", At: at, Earliest: at}, at},
	} {
		if got := c.tg.due(); !got.Equal(c.want) {
			t.Errorf("%s: due %v, want %v", c.name, got, c.want)
		}
	}
}

// waitGivenUp waits up to 10 s for the notifier to give up one event to webhook.
func waitGivenUp(t *testing.T, n *Notifier, webhook string) {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for testutil.ToFloat64(n.dropped.WithLabelValues(webhook)) != 1 {
		if time.Now().After(deadline) {
			t.Fatal("the event was never given up")
		}
		time.Sleep(10 * time.Millisecond)
	}
}
