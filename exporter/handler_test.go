package exporter

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net/http"
	"net/http/httptest"
	"net/url"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/notify"
	"github.com/settle-lab/settle/predict"
)

var quiet = slog.New(slog.NewTextHandler(io.Discard, nil))

// curveState is testState with a lumped curve (21.5 + 160.9·exp(−t/1200 s)) and a
// history of readings along it, so detail and series have something to show.
func curveState() State {
	s := testState()
	bench := append(fakeBench(nil), s.Bench.(fakeBench)...)
	fc := *bench[0].Forecast
	fc.Curve = func(t time.Time) float64 { return 21.5 + 160.9*math.Exp(-t.Sub(t0).Seconds()/1200) }
	fc.Params = append(fc.Params, predict.Param{Name: "h_w_m2k", Value: 9.5, StdErr: 0.4, Unit: "W/(m²·K)"},
		predict.Param{Name: "ambient_c", Value: 21.5, StdErr: math.NaN(), Unit: "°C"})
	bench[0].Forecast = &fc
	s.Bench = bench
	l := NewLatest()
	l.now = func() time.Time { return t0.Add(8 * time.Minute) }
	for i := 0; i <= 240; i++ {
		at := t0.Add(time.Duration(i) * 2 * time.Second)
		l.Record(daq.Reading{Logger: "rack2", Channel: "steel", Time: at, Celsius: fc.Curve(at)})
	}
	l.Record(daq.Reading{Logger: "rack2", Channel: "tile", Time: t0.Add(8 * time.Minute), Status: daq.StatusOpen, Raw: "OPEN"})
	s.Latest = l
	return s
}

func newTestHandler(s State, opt Options) *Handler {
	opt.Log = quiet
	if opt.Now == nil {
		opt.Now = func() time.Time { return t0.Add(8*time.Minute + 5*time.Second) }
	}
	return NewHandler(s, NewRegistry(s), opt)
}

func do(t *testing.T, h http.Handler, method, target, auth, body string) *httptest.ResponseRecorder {
	t.Helper()
	req := httptest.NewRequest(method, target, strings.NewReader(body))
	if auth != "" {
		req.Header.Set("Authorization", auth)
	}
	w := httptest.NewRecorder()
	h.ServeHTTP(w, req)
	return w
}

func TestDetailAndSeriesGolden(t *testing.T) {
	h := newTestHandler(curveState(), Options{})
	for _, c := range []struct{ target, golden string }{
		{"/api/v1/channels/steel", "detail.json"},
		{"/api/v1/channels/steel/series?from=2026-03-04T10:02:00Z&max_points=12", "series.json"},
		{"/api/v1/channels/tile", "detail-fault.json"},
	} {
		w := do(t, h, "GET", c.target, "", "")
		if w.Code != 200 {
			t.Fatalf("%s = %d %s", c.target, w.Code, w.Body)
		}
		compareGolden(t, filepath.Join("..", "testdata", "exporter", c.golden), w.Body.Bytes())
	}
}

func TestSeriesValues(t *testing.T) {
	s := curveState()
	q := SeriesQuery{From: t0.Add(2 * time.Minute), MaxPoints: 12}
	got, ok := Series(s, "steel", q)
	if !ok {
		t.Fatal("no steel series")
	}
	// Readings every 2 s from 10:02 to 10:08 inclusive: 181 of them.
	if got.Total != 181 || len(got.Readings) != 12 {
		t.Errorf("total %d, returned %d; want 181 and 12", got.Total, len(got.Readings))
	}
	if first := got.Readings[0][0]; first != ms(t0.Add(2*time.Minute)) {
		t.Errorf("first reading at %v, want the window start", first)
	}
	// The curve must reach the latest end of the handling interval (10:44) and agree
	// with the model at its ends.
	last := got.Curve[len(got.Curve)-1]
	if last[0] != ms(t0.Add(44*time.Minute)) {
		t.Errorf("curve ends at %v, want %v", last[0], ms(t0.Add(44*time.Minute)))
	}
	want := 21.5 + 160.9*math.Exp(-44*60.0/1200)
	if math.Abs(last[1]-want) > 1e-3 {
		t.Errorf("curve end %.4f °C, want %.4f", last[1], want)
	}
	if _, ok := Series(s, "nope", q); ok {
		t.Error("a series for an unknown channel")
	}
	if got.Centre != nil {
		t.Errorf("a centre curve for a fit without one: %d points", len(got.Centre))
	}
	// A surface sensor's fit carries the estimated centre: sampled at the curve's times.
	bench := s.Bench.(fakeBench)
	fc := *bench[0].Forecast
	fc.Centre = func(t time.Time) float64 { return fc.Curve(t) + 5 }
	bench[0].Forecast = &fc
	got, _ = Series(s, "steel", q)
	if len(got.Centre) != len(got.Curve) || got.Centre[0][0] != got.Curve[0][0] || math.Abs(got.Centre[0][1]-got.Curve[0][1]-5) > 1e-3 {
		t.Errorf("centre %d points starting %v; curve %d starting %v", len(got.Centre), got.Centre[0], len(got.Curve), got.Curve[0])
	}
}

func TestParseSeriesQuery(t *testing.T) {
	newest := t0.Add(time.Hour)
	cases := []struct {
		q       string
		from    time.Time
		maxPts  int
		wantErr string
	}{
		{"", time.Time{}, DefaultMaxPoints, ""},
		{"from=-15m", newest.Add(-15 * time.Minute), DefaultMaxPoints, ""},
		{"from=1772618400&max_points=50", t0, 50, ""},
		{"from=2026-03-04T10:00:00Z", t0, DefaultMaxPoints, ""},
		{"from=yesterday", time.Time{}, 0, `from: "yesterday" is not RFC 3339`},
		{"from=NaN", time.Time{}, 0, `from: "NaN" is not`},
		{"max_points=1", time.Time{}, 0, "max_points"},
		{"max_points=99999999", time.Time{}, 0, "max_points"},
		{"from=2026-03-04T11:00:00Z&to=2026-03-04T10:00:00Z", time.Time{}, 0, "is before from"},
	}
	for _, c := range cases {
		v := mustQuery(t, c.q)
		got, err := ParseSeriesQuery(v.Get, newest)
		if c.wantErr != "" {
			if err == nil || !strings.Contains(err.Error(), c.wantErr) {
				t.Errorf("%q: err = %v, want %q", c.q, err, c.wantErr)
			}
			continue
		}
		if err != nil || !got.From.Equal(c.from) || got.MaxPoints != c.maxPts {
			t.Errorf("%q = %+v, %v; want from %v, max %d", c.q, got, err, c.from, c.maxPts)
		}
	}
}

func TestLTTB(t *testing.T) {
	var pts []Point
	for i := range 1000 {
		c := 20.0
		if i == 517 {
			c = 90 // a single peak must survive
		}
		pts = append(pts, Point{Time: t0.Add(time.Duration(i) * time.Second), Celsius: c})
	}
	got := LTTB(pts, 50)
	if len(got) != 50 || got[0] != pts[0] || got[49] != pts[999] {
		t.Fatalf("LTTB kept %d points, ends %v %v", len(got), got[0].Time, got[len(got)-1].Time)
	}
	peak := false
	for i, p := range got {
		peak = peak || p.Celsius == 90
		if i > 0 && !p.Time.After(got[i-1].Time) {
			t.Fatalf("point %d out of order", i)
		}
	}
	if !peak {
		t.Error("the peak was lost")
	}
	if n := len(LTTB(pts[:10], 50)); n != 10 {
		t.Errorf("fewer points than asked: got %d, want all 10", n)
	}
}

func TestHistoryThinsOlderHalf(t *testing.T) {
	l := NewLatest()
	l.capacity = 8
	for i := range 20 {
		l.Record(daq.Reading{Channel: "a", Time: t0.Add(time.Duration(i) * time.Second), Celsius: float64(i)})
	}
	h := l.History("a", time.Time{}, time.Time{})
	if len(h) > 8 || h[0].Celsius != 0 || h[len(h)-1].Celsius != 19 {
		t.Fatalf("history = %v", h)
	}
	for i := 1; i < len(h); i++ {
		if h[i].Time.Before(h[i-1].Time) {
			t.Fatalf("history out of order: %v", h)
		}
	}
	// The newest readings are kept at full resolution.
	if h[len(h)-2].Celsius != 18 || h[len(h)-3].Celsius != 17 {
		t.Errorf("recent readings thinned: %v", h)
	}
	if got := l.History("a", t0.Add(17*time.Second), t0.Add(18*time.Second)); len(got) != 2 {
		t.Errorf("window 17..18 s = %v, want 2 readings", got)
	}
}

func TestChannelFaults(t *testing.T) {
	arrived := t0
	l := NewLatest()
	l.now = func() time.Time { return arrived }
	l.Record(daq.Reading{Logger: "rack2", Channel: "a", Time: t0, Celsius: 80})
	up, failed := true, false
	s := State{Latest: l, Ports: func() []daq.PortStats {
		return []daq.PortStats{{Logger: "rack2", Port: "/dev/ttyUSB0", Up: up, Failed: failed}}
	}}
	kind := func(now time.Time) string {
		if f := channelFault(s, "a", now); f != nil {
			return f.Kind
		}
		return ""
	}
	if k := kind(t0.Add(29 * time.Second)); k != "" {
		t.Errorf("29 s after the last reading: fault %q, want none", k)
	}
	if k := kind(t0.Add(31 * time.Second)); k != FaultStale {
		t.Errorf("31 s after: fault %q, want stale (DefaultStaleAfter 30 s)", k)
	}
	up = false // not open yet (start-up, reload): not a fault
	if k := kind(t0.Add(time.Second)); k != "" {
		t.Errorf("port not yet open: fault %q, want none", k)
	}
	failed = true
	if k := kind(t0.Add(time.Second)); k != FaultPortDown {
		t.Errorf("port failed: fault %q, want port_down", k)
	}
	// A channel that has never had a reading: its logger's failed port is the fault
	// (a wrong port at start-up), once the configuration says which logger reads it.
	if f := channelFault(s, "never", t0); f != nil {
		t.Errorf("never-read channel without a logger map: fault %+v, want none", f)
	}
	s.LoggerOf = map[string]string{"never": "rack2"}
	if f := channelFault(s, "never", t0); f == nil || f.Kind != FaultPortDown || f.Since != nil {
		t.Errorf("never-read channel on a failed port: fault %+v, want port_down with no since", f)
	}
	up, failed = true, false
	if f := channelFault(s, "never", t0); f != nil {
		t.Errorf("never-read channel on an open port: fault %+v, want none", f)
	}
	arrived = t0.Add(2 * time.Second)
	l.Record(daq.Reading{Logger: "rack2", Channel: "a", Time: t0.Add(2 * time.Second), Status: daq.StatusOpen})
	f := channelFault(s, "a", arrived)
	if f == nil || f.Kind != "open" || !f.Since.Equal(t0.Add(2*time.Second)) {
		t.Errorf("open reading: fault %+v, want open since the reading", f)
	}
	// A logger that reports once a minute is not stale after 40 s.
	for i := 1; i <= 10; i++ {
		arrived = t0.Add(time.Duration(i) * time.Minute)
		l.Record(daq.Reading{Logger: "rack2", Channel: "b", Time: arrived, Celsius: 20})
	}
	if f := channelFault(s, "b", arrived.Add(40*time.Second)); f != nil {
		t.Errorf("slow logger 40 s after its reading: %+v, want no fault", f)
	}
}

func TestSecurity(t *testing.T) {
	h := newTestHandler(curveState(), Options{Token: "s3cret"})
	huge := `{"webhook":"` + strings.Repeat("x", MaxBodyBytes) + `"}`
	cases := []struct {
		name, method, target, auth, body string
		want                             int
		errText                          string
	}{
		{"no credentials", "POST", "/api/v1/notify/test", "", "", 401, "Bearer"},
		{"basic auth", "POST", "/api/v1/notify/test", "Basic czNjcmV0", "", 401, "Bearer"},
		{"wrong token", "POST", "/api/v1/notify/test", "Bearer s3cre", "", 403, "wrong token"},
		{"right token", "POST", "/api/v1/notify/test", "Bearer s3cret", "", 202, ""},
		{"bad JSON", "POST", "/api/v1/notify/test", "Bearer s3cret", `{"webhook":`, 400, "body"},
		{"unknown field", "POST", "/api/v1/notify/test", "Bearer s3cret", `{"hook":"a"}`, 400, "unknown field"},
		{"huge body", "POST", "/api/v1/notify/test", "Bearer s3cret", huge, 413, "64 KiB"},
		{"unknown webhook", "POST", "/api/v1/notify/test", "Bearer s3cret", `{"webhook":"x"}`, 404, "no webhook"},
		{"DELETE needs token", "DELETE", "/api/v1/channels", "", "", 401, ""},
		{"DELETE with token", "DELETE", "/api/v1/channels", "Bearer s3cret", "", 405, ""},
		{"escaped traversal", "GET", "/api/v1/channels/..%2f..%2fetc%2fpasswd", "", "", 404, "no channel"},
		{"traversal in series", "GET", "/api/v1/channels/..%2f/series", "", "", 404, "no channel"},
		{"static traversal", "GET", "/static/..%2fpage.go", "", "", 404, ""},
		{"static dir", "GET", "/static/", "", "", 404, ""},
		// The mux redirects unclean paths to their clean form on this server; the
		// clean path is then answered (or refused) like any other.
		{"static root", "GET", "/static", "", "", 307, ""},
		{"template not static", "GET", "/static/../index.html", "", "", 404, "no such page"},
		{"template by name", "GET", "/index.html", "", "", 404, "no such page"},
		{"unknown path", "PUT", "/nope", "Bearer s3cret", "", 404, "no such page"},
		{"bad max_points", "GET", "/api/v1/channels/steel/series?max_points=-1", "", "", 400, "max_points"},
		{"bad from", "GET", "/api/v1/channels/steel/series?from=%00", "", "", 400, "from"},
		{"long name", "GET", "/api/v1/channels/" + strings.Repeat("a", 5000), "", "", 404, "…"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			w := do(t, h, c.method, c.target, c.auth, c.body)
			if w.Code != c.want {
				t.Fatalf("%s %s = %d %s, want %d", c.method, c.target, w.Code, w.Body, c.want)
			}
			if c.want >= 400 && strings.HasPrefix(w.Header().Get("Content-Type"), "application/json") {
				var e httpjson.Error
				if err := json.Unmarshal(w.Body.Bytes(), &e); err != nil || !strings.Contains(e.Error, c.errText) {
					t.Errorf("error body %s, want JSON error containing %q", w.Body, c.errText)
				}
			}
		})
	}
	// No token configured: state changes are refused even with credentials.
	open := newTestHandler(curveState(), Options{})
	if w := do(t, open, "POST", "/api/v1/notify/test", "Bearer anything", ""); w.Code != 403 {
		t.Errorf("no token configured: POST = %d, want 403", w.Code)
	}
}

func TestRunsHookAndPage(t *testing.T) {
	runs := http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		httpjson.Write(w, 200, map[string]string{"path": r.URL.Path})
	})
	h := newTestHandler(curveState(), Options{Runs: runs, Display: Display{Fahrenheit: true}})
	for _, p := range []string{"/api/v1/runs", "/api/v1/runs/7/summary.json"} {
		if w := do(t, h, "GET", p, "", ""); w.Code != 200 || !strings.Contains(w.Body.String(), p) {
			t.Errorf("GET %s = %d %s, want the runs handler", p, w.Code, w.Body)
		}
	}
	page := do(t, h, "GET", "/", "", "")
	body := page.Body.String()
	if page.Code != 200 || !strings.Contains(body, `data-units="F"`) || !strings.Contains(body, predict.HandlingCautions[1]) {
		t.Errorf("page = %d, units or cautions missing", page.Code)
	}
	if csp := page.Header().Get("Content-Security-Policy"); !strings.Contains(csp, "default-src 'self'") {
		t.Errorf("CSP = %q", csp)
	}
	if strings.Contains(body, "http://") || strings.Contains(body, "https://") {
		t.Error("the page refers to an outside URL; it must work offline")
	}
	for path, ct := range map[string]string{"/static/app.js": "javascript", "/static/style.css": "text/css", "/static/icon.svg": "image/svg+xml"} {
		w := do(t, h, "GET", path, "", "")
		if w.Code != 200 || !strings.Contains(w.Header().Get("Content-Type"), ct) {
			t.Errorf("%s = %d %q", path, w.Code, w.Header().Get("Content-Type"))
		}
		if strings.Contains(w.Body.String(), "https://") {
			t.Errorf("%s refers to an outside URL", path)
		}
	}
}

// sse reads server-sent events from body.
type sse struct{ sc *bufio.Scanner }

func (s sse) next(t *testing.T) (name, data string) {
	t.Helper()
	for s.sc.Scan() {
		line := s.sc.Text()
		switch {
		case strings.HasPrefix(line, "event: "):
			name = line[7:]
		case strings.HasPrefix(line, "data: "):
			data = line[6:]
		case line == "" && name != "":
			return name, data
		}
	}
	t.Fatalf("stream ended: %v", s.sc.Err())
	return "", ""
}

// swapBench is a bench whose snapshot a test can replace while the poller reads it.
type swapBench struct {
	mu  sync.Mutex
	chs []predict.ChannelState
}

func (b *swapBench) Snapshot() []predict.ChannelState {
	b.mu.Lock()
	defer b.mu.Unlock()
	return append([]predict.ChannelState(nil), b.chs...)
}

func (b *swapBench) refit(at time.Time) {
	b.mu.Lock()
	defer b.mu.Unlock()
	fc := *b.chs[0].Forecast
	fc.FittedAt = at
	b.chs[0].Forecast = &fc
}

func TestEventStream(t *testing.T) {
	s := curveState()
	bench := &swapBench{chs: s.Bench.(fakeBench)}
	s.Bench = bench
	h := newTestHandler(s, Options{Heartbeat: 50 * time.Millisecond, PollInterval: 20 * time.Millisecond})
	srv := NewServer(h, ServerOptions{})
	ts := httptest.NewUnstartedServer(nil)
	done := make(chan error, 1)
	go func() { done <- srv.Serve(ts.Listener) }()
	resp, err := http.Get("http://" + ts.Listener.Addr().String() + "/api/v1/events")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	if ct := resp.Header.Get("Content-Type"); ct != "text/event-stream" {
		t.Fatalf("content type %q", ct)
	}
	st := sse{bufio.NewScanner(resp.Body)}
	name, data := st.next(t)
	var first ChannelsResponse
	if name != "channels" || json.Unmarshal([]byte(data), &first) != nil || len(first.Channels) != 2 {
		t.Fatalf("first event %s %s, want the channel list", name, data)
	}
	// A reading, a refit and a thermocouple coming loose on steel.
	s.Latest.Record(daq.Reading{Logger: "rack2", Channel: "steel", Time: t0.Add(8 * time.Minute), Celsius: 150.25})
	bench.refit(t0.Add(8*time.Minute + 2*time.Second))
	s.Latest.Record(daq.Reading{Logger: "rack2", Channel: "steel", Time: t0.Add(8 * time.Minute), Status: daq.StatusOpen, Raw: "OPEN"})
	seen, events := map[string]string{}, 0
	for len(seen) < 4 {
		name, data := st.next(t)
		if events++; events > 1000 {
			t.Fatalf("1000 events without all four kinds; got %v", seen)
		}
		if _, ok := seen[name]; !ok {
			seen[name] = data
		}
	}
	if !strings.Contains(seen["reading"], `"celsius":150.25`) {
		t.Errorf("reading event %s", seen["reading"])
	}
	if !strings.Contains(seen["forecast"], `"fitted_at":"2026-03-04T10:08:02Z"`) {
		t.Errorf("forecast event %s, want the refit", seen["forecast"])
	}
	if !strings.Contains(seen["fault"], `{"channel":"steel","fault":{"kind":"open"`) {
		t.Errorf("fault event %s, want steel open", seen["fault"])
	}
	// Shutdown ends the stream instead of waiting for it.
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	if err := srv.Shutdown(ctx); err != nil {
		t.Errorf("Shutdown with a stream open: %v", err)
	}
	if err := <-done; err != nil {
		t.Errorf("Serve: %v", err)
	}
}

func TestSlowStreamClientIsDropped(t *testing.T) {
	b := newBroker(4, 2, 2)
	slow, _ := b.join("192.0.2.1")
	fast, _ := b.join("192.0.2.2")
	if _, err := b.join("192.0.2.3"); err != errBrokerFull {
		t.Errorf("a third client joined a broker capped at 2: %v", err)
	}
	for i := range 10 {
		b.publish("reading", i)
		<-fast.ch // the fast client keeps up
	}
	select {
	case <-slow.gone:
	default:
		t.Fatal("the slow client was not dropped")
	}
	select {
	case <-fast.gone:
		t.Fatal("the fast client was dropped")
	default:
	}
	if b.dropped.Load() != 1 {
		t.Errorf("dropped = %d, want 1", b.dropped.Load())
	}
	b.leave(slow) // leaving after being dropped is harmless
}

func TestNotificationsFromPolls(t *testing.T) {
	got := make(chan string, 10)
	recv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		var ev struct{ Kind, Channel, Fault string }
		_ = json.NewDecoder(r.Body).Decode(&ev)
		got <- ev.Kind + " " + ev.Channel + " " + ev.Fault
	}))
	defer recv.Close()
	s := curveState()
	h := newTestHandler(s, Options{PollInterval: 10 * time.Millisecond,
		Webhooks: []notify.Webhook{{Name: "bench", URL: recv.URL, Events: []string{"fault"}}}})
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	go h.Run(ctx)
	select {
	case ev := <-got:
		if ev != "fault tile open" {
			t.Errorf("event %q, want the open thermocouple on tile", ev)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("no notification")
	}
	select {
	case ev := <-got:
		t.Errorf("a second notification %q: the fault was sent twice", ev)
	case <-time.After(100 * time.Millisecond):
	}
	var _ prometheus.Collector // the counters are checked in notify
}

func mustQuery(t *testing.T, q string) url.Values {
	t.Helper()
	v, err := url.ParseQuery(q)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

// TestChannelsDemo checks the demo field: present with the time-lapse speed when the
// daemon runs the demo, absent otherwise (and in the event stream's first message too,
// which is built by the same function).
func TestChannelsDemo(t *testing.T) {
	for _, speed := range []float64{0, 60} {
		h := newTestHandler(curveState(), Options{Display: Display{TimeLapse: speed}})
		w := do(t, h, "GET", "/api/v1/channels", "", "")
		var body map[string]json.RawMessage
		if err := json.Unmarshal(w.Body.Bytes(), &body); err != nil {
			t.Fatal(err)
		}
		demo, ok := body["demo"]
		switch {
		case speed == 0 && ok:
			t.Errorf("not a demo, but demo = %s", demo)
		case speed > 0 && string(demo) != `{"speed":60}` && strings.Join(strings.Fields(string(demo)), "") != `{"speed":60}`:
			t.Errorf("demo at 60×: demo = %s", demo)
		}
		if resp := h.channels(t0); (resp.Demo != nil) != (speed > 0) {
			t.Errorf("speed %g: channels() demo %+v", speed, resp.Demo)
		}
	}
}

// The API's view of every channel takes one snapshot of the ports, not one per
// channel (the event stream's poll builds the same view every second), and each
// channel still shows its own logger's lost port.
func TestChannelsReadPortsOnce(t *testing.T) {
	l := NewLatest()
	l.now = func() time.Time { return t0 }
	var bench fakeBench
	for i := range 40 {
		name := fmt.Sprintf("c%d", i)
		bench = append(bench, predict.ChannelState{Name: name, LastCelsius: math.NaN()})
		l.Record(daq.Reading{Logger: fmt.Sprintf("rack%d", i%4), Channel: name, Time: t0, Celsius: 80})
	}
	calls := 0
	s := State{Latest: l, Bench: bench, Ports: func() []daq.PortStats {
		calls++
		return []daq.PortStats{{Logger: "rack0", Port: "/dev/ttyUSB0", Failed: true}, {Logger: "rack1", Up: true},
			{Logger: "rack2", Up: true}, {Logger: "rack3", Up: true}}
	}}
	resp := Channels(s, t0.Add(time.Second))
	if calls != 1 {
		t.Errorf("40 channels on 4 loggers: %d port snapshots, want 1", calls)
	}
	down := 0
	for i, ch := range resp.Channels {
		if got, want := ch.Fault != nil && ch.Fault.Kind == FaultPortDown, i%4 == 0; got != want {
			t.Errorf("%s (logger rack%d): port_down %v, want %v", ch.Name, i%4, got, want)
		}
		if ch.Fault != nil {
			down++
		}
	}
	if down != 10 {
		t.Errorf("%d channels show a fault, want the 10 on rack0", down)
	}
}
