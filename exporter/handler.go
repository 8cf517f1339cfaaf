package exporter

import (
	"bytes"
	"crypto/subtle"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"strings"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/notify"
	"github.com/settle-lab/settle/predict"
)

// MaxBodyBytes caps every request body the daemon reads.
const MaxBodyBytes = 64 << 10

// Options configures NewHandler; the zero value serves read-only endpoints in °C
// with no runs API and no notifications.
type Options struct {
	// Token is the bearer token every state-changing request (any method other than
	// GET, HEAD and OPTIONS) must carry. Empty: such requests are refused.
	Token string
	// Display sets how the status page shows values (metrics and the API stay in °C).
	Display Display
	// Runs, when set, serves /api/v1/runs and everything below it.
	Runs http.Handler
	// Webhooks receive notifications (config notify.webhooks).
	Webhooks []notify.Webhook
	// Notify tunes the notifier (retries, client); its Registerer and Cautions are set
	// by NewHandler.
	Notify notify.Options
	// Log receives the server's own problems (default: slog.Default()).
	Log *slog.Logger
	// PollInterval is how often forecasts and faults are checked for changes that the
	// event stream and the notifications report (default 1 s).
	PollInterval time.Duration
	// Heartbeat is how often an idle event stream sends a heartbeat (default 15 s).
	Heartbeat time.Duration
	// ClientBuffer is how many events a stream client may fall behind before it is
	// dropped (default DefaultClientBuffer).
	ClientBuffer int
	// MaxStreams caps concurrent event-stream clients (default DefaultMaxStreams).
	MaxStreams int
	// MaxStreamsPerAddr caps concurrent event-stream clients from one remote IP
	// (default DefaultMaxStreamsPerAddr). Behind a reverse proxy every client has the
	// proxy's address: raise it there.
	MaxStreamsPerAddr int
	// StreamWriteTimeout drops an event-stream client that has not taken a write
	// within it (default DefaultStreamWriteTimeout).
	StreamWriteTimeout time.Duration
	// Now replaces the wall clock in tests (default time.Now).
	Now func() time.Time
	// Placement, when set, serves GET /api/v1/placement (the placement rule's state).
	Placement http.Handler
	// Health adds fields to /healthz (the daemon: whether the start-up replay of the
	// journal is done). Nil adds none.
	Health func() map[string]any
}

// Display is how the status page shows values; the daemon copies it from its
// configuration (config.Display).
type Display struct {
	// Fahrenheit shows temperatures in °F (default °C).
	Fahrenheit bool
	// TimeLapse is the simulated rack's speed under `settle run --demo`, physical
	// seconds per wall second, which the page shows as a badge; 0: real time.
	TimeLapse float64
}

// Handler is the daemon's HTTP handler:
//
//	GET  /                                   status page (embedded assets under /static/)
//	GET  /metrics                            Prometheus metrics
//	GET  /healthz                            liveness (and Options.Health)
//	GET  /api/v1/channels                    every channel with its forecast
//	GET  /api/v1/channels/{name}             one channel with the fit in full
//	GET  /api/v1/channels/{name}/series      readings and fitted curve, downsampled
//	GET  /api/v1/events                      server-sent events
//	POST /api/v1/channels/{name}/acknowledge a ready specimen was seen (token)
//	POST /api/v1/notify/test                 send a test notification (token)
//	     /api/v1/runs[/...]                  the runs API, when Options.Runs is set
//	GET  /api/v1/placement                   the placement rule's state, when Options.Placement is set
//
// Its Run method polls for forecast and fault changes; NewServer runs it.
type Handler struct {
	state    State
	opt      Options
	mux      *http.ServeMux
	broker   *broker
	notifier *notify.Notifier
	unsub    func()
}

// Metrics is what the handler needs of a registry: it registers the notifications'
// counters and gathers what /metrics serves. NewRegistry's Registry is the daemon's.
type Metrics interface {
	prometheus.Registerer
	prometheus.Gatherer
}

// NewHandler returns the handler over s. Counters of the notifications are registered
// with reg, which also serves /metrics (a Registry from NewRegistry(s) for the
// channels' series).
func NewHandler(s State, reg Metrics, opt Options) *Handler {
	opt = handlerDefaults(opt)
	h := &Handler{state: s, opt: opt, mux: http.NewServeMux(),
		broker: newBroker(opt.ClientBuffer, opt.MaxStreams, opt.MaxStreamsPerAddr)}
	nopt := opt.Notify
	nopt.Registerer, nopt.Cautions = reg, predict.HandlingCautions
	if nopt.Log == nil {
		nopt.Log = opt.Log
	}
	h.notifier = notify.New(opt.Webhooks, nopt)
	reg.MustRegister(newStreamCollector(h.broker))
	if s.Latest != nil {
		h.unsub = s.Latest.subscribe(func(r daq.Reading) { h.broker.publish("reading", readingEvent(r)) })
	}
	h.routes(reg)
	return h
}

func handlerDefaults(opt Options) Options {
	if opt.Log == nil {
		opt.Log = slog.Default()
	}
	if opt.PollInterval <= 0 {
		opt.PollInterval = time.Second
	}
	if opt.Heartbeat <= 0 {
		opt.Heartbeat = DefaultHeartbeat
	}
	if opt.ClientBuffer <= 0 {
		opt.ClientBuffer = DefaultClientBuffer
	}
	if opt.MaxStreams <= 0 {
		opt.MaxStreams = DefaultMaxStreams
	}
	if opt.MaxStreamsPerAddr <= 0 {
		opt.MaxStreamsPerAddr = DefaultMaxStreamsPerAddr
	}
	if opt.StreamWriteTimeout <= 0 {
		opt.StreamWriteTimeout = DefaultStreamWriteTimeout
	}
	if opt.Now == nil {
		opt.Now = time.Now
	}
	return opt
}

// channels is Channels plus the daemon-wide fields (the demo's time-lapse).
func (h *Handler) channels(now time.Time) ChannelsResponse {
	resp := Channels(h.state, now)
	if v := h.opt.Display.TimeLapse; v > 0 {
		resp.Demo = &DemoJSON{Speed: v}
	}
	return resp
}

func (h *Handler) routes(reg Metrics) {
	m := h.mux
	m.Handle("GET /metrics", metricsHandler(reg))
	m.HandleFunc("GET /healthz", func(w http.ResponseWriter, r *http.Request) {
		out := map[string]any{}
		if h.opt.Health != nil {
			out = h.opt.Health()
		}
		out["status"] = "ok"
		httpjson.Write(w, http.StatusOK, out)
	})
	m.HandleFunc("GET /api/v1/channels", func(w http.ResponseWriter, r *http.Request) {
		httpjson.Write(w, http.StatusOK, h.channels(h.opt.Now()))
	})
	m.HandleFunc("GET /api/v1/channels/{name}", h.serveDetail)
	m.HandleFunc("GET /api/v1/channels/{name}/series", h.serveSeries)
	m.HandleFunc("GET /api/v1/events", h.serveEvents)
	m.HandleFunc("POST /api/v1/channels/{name}/acknowledge", h.serveAcknowledge)
	m.HandleFunc("POST /api/v1/notify/test", h.serveNotifyTest)
	if h.opt.Placement != nil {
		m.Handle("GET /api/v1/placement", h.opt.Placement)
	}
	if h.opt.Runs != nil {
		m.Handle("/api/v1/runs", h.opt.Runs)
		m.Handle("/api/v1/runs/", h.opt.Runs)
	}
	m.HandleFunc("GET /{$}", h.servePage)
	m.Handle("GET /static/", staticHandler())
}

// ServeHTTP checks the token of state-changing requests, caps request bodies and
// dispatches.
func (h *Handler) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	w.Header().Set("X-Content-Type-Options", "nosniff")
	if r.Body != nil {
		r.Body = http.MaxBytesReader(w, r.Body, MaxBodyBytes)
	}
	switch r.Method {
	case http.MethodGet, http.MethodHead, http.MethodOptions:
	default:
		if status, msg := checkToken(h.opt.Token, r.Header.Get("Authorization")); status != 0 {
			w.Header().Set("WWW-Authenticate", `Bearer realm="settle"`)
			httpjson.WriteError(w, status, msg)
			return
		}
	}
	if _, pattern := h.mux.Handler(r); pattern == "" || r.Method == http.MethodOptions {
		h.notFound(w, r)
		return
	}
	if !oneJSONBody(w, r) {
		return
	}
	h.mux.ServeHTTP(w, r)
}

// notFound answers a request no route takes, and every OPTIONS request, in JSON: 405
// with an Allow header when the path exists for another method, else 404.
func (h *Handler) notFound(w http.ResponseWriter, r *http.Request) {
	if allow := h.allowed(r); allow != "" {
		w.Header().Set("Allow", allow)
		httpjson.WriteError(w, http.StatusMethodNotAllowed, r.Method+" is not allowed on "+quote(r.URL.Path)+"; allowed: "+allow)
		return
	}
	httpjson.WriteError(w, http.StatusNotFound, "no such page: "+quote(r.URL.Path))
}

// allowed lists the methods some route takes on r's path ("" when none does). A path
// handed whole to another handler (the runs API) lists that API's methods.
func (h *Handler) allowed(r *http.Request) string {
	if a, ok := h.opt.Runs.(interface{ Allowed(*http.Request) string }); ok &&
		(r.URL.Path == "/api/v1/runs" || strings.HasPrefix(r.URL.Path, "/api/v1/runs/")) {
		return a.Allowed(r)
	}
	return httpjson.AllowedMethods(h.mux, r)
}

// oneJSONBody refuses a request body that holds anything after its first JSON value
// (400, in JSON), so a client's concatenated or garbled body is never half-applied. It
// buffers the body (at most MaxBodyBytes: 413 beyond) and hands it on unchanged; a body
// that is not JSON at all is left to the route, which says what is wrong with it.
func oneJSONBody(w http.ResponseWriter, r *http.Request) bool {
	if r.Body == nil || r.Method == http.MethodGet || r.Method == http.MethodHead {
		return true
	}
	b, err := io.ReadAll(r.Body)
	if err != nil {
		var tooBig *http.MaxBytesError
		if errors.As(err, &tooBig) {
			httpjson.WriteError(w, http.StatusRequestEntityTooLarge, "request body over 64 KiB")
		} else {
			httpjson.WriteError(w, http.StatusBadRequest, "body: "+err.Error())
		}
		return false
	}
	r.Body = io.NopCloser(bytes.NewReader(b))
	dec := json.NewDecoder(bytes.NewReader(b))
	var first json.RawMessage
	if dec.Decode(&first) != nil {
		return true
	}
	end := dec.InputOffset()
	if _, err := dec.Token(); !errors.Is(err, io.EOF) {
		httpjson.WriteError(w, http.StatusBadRequest, fmt.Sprintf("body: unexpected data after the JSON value (offset %d); send one JSON value per request", end))
		return false
	}
	return true
}

// checkToken returns 0 when the Authorization header carries token, else the status and
// message to answer with: 401 when the credentials are missing, 403 when they are wrong
// or when no token is configured (state-changing requests are then refused).
func checkToken(token, header string) (int, string) {
	if token == "" {
		return http.StatusForbidden, "this server has no token configured (http.token or SETTLE_TOKEN), so it refuses requests that change state"
	}
	got, ok := strings.CutPrefix(header, "Bearer ")
	if !ok || got == "" {
		return http.StatusUnauthorized, "this request changes state: send Authorization: Bearer <token>"
	}
	if subtle.ConstantTimeCompare([]byte(got), []byte(token)) != 1 {
		return http.StatusForbidden, "wrong token"
	}
	return 0, ""
}

func (h *Handler) serveDetail(w http.ResponseWriter, r *http.Request) {
	name := r.PathValue("name")
	d, ok := Detail(h.state, name, h.opt.Now())
	if !ok {
		httpjson.WriteError(w, http.StatusNotFound, "no channel named "+quote(name))
		return
	}
	httpjson.Write(w, http.StatusOK, d)
}

func (h *Handler) serveSeries(w http.ResponseWriter, r *http.Request) {
	name := r.PathValue("name")
	if _, ok := findChannel(h.state, name); !ok {
		httpjson.WriteError(w, http.StatusNotFound, "no channel named "+quote(name))
		return
	}
	var newest time.Time
	if h.state.Latest != nil {
		if rd, ok := h.state.Latest.Get(name); ok {
			newest = rd.Time
		}
	}
	q, err := ParseSeriesQuery(r.URL.Query().Get, newest)
	if err != nil {
		httpjson.WriteError(w, http.StatusBadRequest, err.Error())
		return
	}
	s, _ := Series(h.state, name, q)
	httpjson.Write(w, http.StatusOK, s)
}

// NotifyTestRequest is the optional body of POST /api/v1/notify/test.
type NotifyTestRequest struct {
	// Webhook names one webhook; empty sends to every webhook.
	Webhook string `json:"webhook"`
}

func (h *Handler) serveNotifyTest(w http.ResponseWriter, r *http.Request) {
	var req NotifyTestRequest
	dec := json.NewDecoder(r.Body)
	dec.DisallowUnknownFields()
	if err := dec.Decode(&req); err != nil && !errors.Is(err, io.EOF) {
		var tooBig *http.MaxBytesError
		if errors.As(err, &tooBig) {
			httpjson.WriteError(w, http.StatusRequestEntityTooLarge, "request body over 64 KiB")
			return
		}
		httpjson.WriteError(w, http.StatusBadRequest, "body: "+err.Error())
		return
	}
	n, err := h.notifier.Test(req.Webhook, h.opt.Now())
	if err != nil {
		httpjson.WriteError(w, http.StatusNotFound, err.Error())
		return
	}
	httpjson.Write(w, http.StatusAccepted, map[string]int{"queued": n})
}

// quote quotes s for an error message, capped so a hostile name cannot flood the log.
func quote(s string) string {
	if len(s) > 80 {
		s = s[:80] + "…"
	}
	b, _ := json.Marshal(s)
	return string(b)
}
