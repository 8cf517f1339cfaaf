package runs

import (
	"bytes"
	"crypto/subtle"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"strconv"
	"strings"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/report"
)

// MaxBodyBytes caps the size of a request body of the runs API.
const MaxBodyBytes = 64 << 10

// APIOptions configures API. The zero value serves reads and refuses changes.
type APIOptions struct {
	// Token is the bearer token POST requests must carry; empty refuses every POST.
	Token string
	// Live returns the daemon's latest fit of a channel (as fitted, not re-anchored to
	// later readings, so that a report made after the run stops replays it), or nil;
	// reports of active runs use it. Nil: reports always refit from the journal.
	Live func(channel string) *predict.Forecast
	// Channel returns a channel's configured targets and whether the channel exists;
	// a run started without targets gets these, and a run on an unknown channel is
	// refused. Nil: any channel, no default targets.
	Channel func(channel string) ([]predict.Target, bool)
	// Ambient reports whether a channel is a sensor of the room's air (its role, or
	// another channel names it as its ambient): a run on one is refused. Nil: none is.
	Ambient func(channel string) bool
	// Engine, when non-nil, makes the reports of runs without a live forecast the
	// way the daemon forecast them (Engine.Forecast). Nil: they refit (Refit).
	Engine *Engine
	// Logger receives run start/stop lines and unexpected errors. Nil means
	// slog.Default().
	Logger *slog.Logger
}

// API serves runs over HTTP:
//
//	GET  /api/v1/runs[?channel=C&active=true&limit=N]  list, newest first
//	GET  /api/v1/runs/{id}                             a run, its forecast history and crossings
//	GET  /api/v1/runs/{id}/readings.csv                its readings as CSV
//	GET  /api/v1/runs/{id}/summary.json                its report summary
//	GET  /api/v1/runs/{id}/figure.png                  its report figure
//	POST /api/v1/runs                                  start a run (journal.RunSpec as JSON)
//	POST /api/v1/runs/{id}/stop                        stop a run (optional {"at": time})
//
// POST needs "Authorization: Bearer <token>"; with an empty token, POST is refused.
// Bodies are capped at MaxBodyBytes and unknown JSON fields are rejected. Errors are
// JSON {"error": "..."}. Reports of stopped runs refit the recorded readings.
func API(j *journal.Journal, opt APIOptions) http.Handler {
	if opt.Logger == nil {
		opt.Logger = slog.Default()
	}
	a := &api{j: j, token: opt.Token, live: opt.Live, channel: opt.Channel, ambient: opt.Ambient, engine: opt.Engine, log: opt.Logger}
	mux := http.NewServeMux()
	mux.HandleFunc("GET /api/v1/runs", a.list)
	mux.HandleFunc("GET /api/v1/runs/{id}", a.show)
	mux.HandleFunc("GET /api/v1/runs/{id}/readings.csv", a.csv)
	mux.HandleFunc("GET /api/v1/runs/{id}/summary.json", a.summary)
	mux.HandleFunc("GET /api/v1/runs/{id}/figure.png", a.figure)
	mux.HandleFunc("POST /api/v1/runs", a.auth(a.start))
	mux.HandleFunc("POST /api/v1/runs/{id}/stop", a.auth(a.stop))
	return runsHandler{mux}
}

// runsHandler answers a path or method no route of the runs API takes in JSON, like
// every other settle error: 405 with an Allow header, or 404.
type runsHandler struct{ mux *http.ServeMux }

func (h runsHandler) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	if _, pattern := h.mux.Handler(r); pattern != "" {
		h.mux.ServeHTTP(w, r)
		return
	}
	if allow := h.Allowed(r); allow != "" {
		w.Header().Set("Allow", allow)
		httpjson.WriteError(w, http.StatusMethodNotAllowed, r.Method+" is not allowed here; allowed: "+allow)
		return
	}
	httpjson.WriteError(w, http.StatusNotFound, "no such page in the runs API")
}

// Allowed lists the methods the runs API takes on r's path ("" when none does).
func (h runsHandler) Allowed(r *http.Request) string { return httpjson.AllowedMethods(h.mux, r) }

type api struct {
	j       *journal.Journal
	token   string
	live    func(string) *predict.Forecast
	channel func(string) ([]predict.Target, bool)
	ambient func(string) bool
	engine  *Engine
	log     *slog.Logger
}

// RunDetail is the body of GET /api/v1/runs/{id}.
type RunDetail struct {
	Run       journal.Run             `json:"run"`
	Forecasts []journal.ForecastPoint `json:"forecasts"`
	Crossings map[string]time.Time    `json:"crossings"`
}

// StopRequest is the optional body of POST /api/v1/runs/{id}/stop.
type StopRequest struct {
	At time.Time `json:"at,omitzero"`
}

func (a *api) auth(next http.HandlerFunc) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		if a.token == "" {
			httpjson.WriteError(w, http.StatusForbidden, "run changes over HTTP are disabled: the daemon has no API token")
			return
		}
		got, ok := strings.CutPrefix(r.Header.Get("Authorization"), "Bearer ")
		if !ok || subtle.ConstantTimeCompare([]byte(got), []byte(a.token)) != 1 {
			w.Header().Set("WWW-Authenticate", `Bearer realm="settle"`)
			httpjson.WriteError(w, http.StatusUnauthorized, "missing or wrong bearer token")
			return
		}
		next(w, r)
	}
}

func (a *api) list(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	f := journal.RunFilter{Channel: q.Get("channel"), ActiveOnly: q.Get("active") == "true"}
	if s := q.Get("limit"); s != "" {
		n, err := strconv.Atoi(s)
		if err != nil || n < 1 {
			httpjson.WriteError(w, http.StatusBadRequest, fmt.Sprintf("limit %q: want a positive integer", s))
			return
		}
		f.Limit = n
	}
	runs, err := a.j.Runs(f)
	if err != nil {
		a.fail(w, err)
		return
	}
	if runs == nil {
		runs = []journal.Run{}
	}
	httpjson.Write(w, http.StatusOK, map[string]any{"runs": runs})
}

func (a *api) show(w http.ResponseWriter, r *http.Request) {
	run, err := a.j.Run(r.PathValue("id"))
	if err != nil {
		a.fail(w, err)
		return
	}
	d := RunDetail{Run: run, Forecasts: []journal.ForecastPoint{}}
	if h, err := a.j.ForecastHistory(run.ID); err == nil && h != nil {
		d.Forecasts = h
	} else if err != nil {
		a.fail(w, err)
		return
	}
	if d.Crossings, err = a.j.Crossings(run.ID); err != nil {
		a.fail(w, err)
		return
	}
	httpjson.Write(w, http.StatusOK, d)
}

func (a *api) start(w http.ResponseWriter, r *http.Request) {
	var spec journal.RunSpec
	if !decode(w, r, &spec, false) {
		return
	}
	if spec.Origin == "" {
		spec.Origin = "api"
	}
	if len(spec.Targets) > 0 {
		if _, err := predict.ParseTargets(spec.Targets); err != nil {
			httpjson.WriteError(w, http.StatusBadRequest, err.Error())
			return
		}
	}
	if strings.TrimSpace(spec.SpecimenSpec) != "" {
		if _, err := predict.ParseSpecimen([]byte(spec.SpecimenSpec)); err != nil {
			httpjson.WriteError(w, http.StatusBadRequest, "specimen_spec: "+err.Error())
			return
		}
	}
	if a.channel != nil {
		targets, ok := a.channel(spec.Channel)
		if !ok {
			httpjson.WriteError(w, http.StatusBadRequest, fmt.Sprintf("unknown channel %q: not in the daemon's configuration", spec.Channel))
			return
		}
		if len(spec.Targets) == 0 && len(targets) > 0 {
			b, err := predict.TargetsJSON(targets)
			if err != nil {
				a.fail(w, err)
				return
			}
			spec.Targets = b
		}
	}
	if a.ambient != nil && a.ambient(spec.Channel) {
		httpjson.WriteError(w, http.StatusBadRequest, fmt.Sprintf("channel %q is an ambient sensor (the room's air): runs are for specimen positions", spec.Channel))
		return
	}
	run, err := a.j.StartRun(spec)
	if err != nil {
		a.fail(w, err)
		return
	}
	a.log.Info("run started", "run", run.ID, "channel", run.Channel, "specimen", run.Specimen, "origin", run.Origin)
	w.Header().Set("Location", "/api/v1/runs/"+run.ID)
	httpjson.Write(w, http.StatusCreated, run)
}

func (a *api) stop(w http.ResponseWriter, r *http.Request) {
	var req StopRequest
	if !decode(w, r, &req, true) {
		return
	}
	if run, err := a.j.Run(r.PathValue("id")); err == nil && run.Active() && a.live != nil {
		RecordFinal(a.j, run.ID, a.live(run.Channel)) // the history ends with what the page showed
	}
	run, err := a.j.StopRun(r.PathValue("id"), req.At)
	if err != nil {
		a.fail(w, err)
		return
	}
	a.log.Info("run stopped", "run", run.ID, "channel", run.Channel)
	httpjson.Write(w, http.StatusOK, run)
}

// forecast is the model for a report of run: live for an active run, else the
// engine's replay (a refit without an engine).
func (a *api) forecast(run journal.Run) *predict.Forecast {
	if run.Active() && a.live != nil {
		if fc := a.live(run.Channel); fc != nil {
			return fc
		}
	}
	var fc *predict.Forecast
	var err error
	if a.engine != nil {
		fc, err = a.engine.Forecast(a.j, run)
	} else {
		fc, err = Refit(a.j, run, predict.TrackerOptions{})
	}
	if err != nil {
		a.log.Warn("refit for report failed", "run", run.ID, "err", err)
		return nil
	}
	return fc
}

// runReadings looks up the request's run and its readings; on failure it has already
// answered with the error.
func (a *api) runReadings(w http.ResponseWriter, r *http.Request) (journal.Run, []daq.Reading, bool) {
	run, err := a.j.Run(r.PathValue("id"))
	if err == nil {
		var rs []daq.Reading
		if rs, err = report.RunReadings(a.j, run); err == nil {
			return run, rs, true
		}
	}
	a.fail(w, err)
	return journal.Run{}, nil, false
}

func (a *api) csv(w http.ResponseWriter, r *http.Request) {
	run, rs, ok := a.runReadings(w, r)
	if !ok {
		return
	}
	var buf bytes.Buffer
	if _, err := report.WriteCSV(&buf, report.Seq(rs), run.Started); err != nil {
		a.fail(w, err)
		return
	}
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	w.Header().Set("Content-Disposition", fmt.Sprintf(`attachment; filename="%s-readings.csv"`, report.FileName(run.ID)))
	_, _ = w.Write(buf.Bytes())
}

func (a *api) summary(w http.ResponseWriter, r *http.Request) {
	run, err := a.j.Run(r.PathValue("id"))
	if err != nil {
		a.fail(w, err)
		return
	}
	s, err := report.Build(a.j, run, a.forecast(run), time.Now())
	if err != nil {
		a.fail(w, err)
		return
	}
	httpjson.Write(w, http.StatusOK, s)
}

func (a *api) figure(w http.ResponseWriter, r *http.Request) {
	run, rs, ok := a.runReadings(w, r)
	if !ok {
		return
	}
	fc := a.forecast(run)
	s, err := report.Build(a.j, run, fc, time.Now())
	if err != nil {
		a.fail(w, err)
		return
	}
	var buf bytes.Buffer
	if err := report.WritePNG(&buf, s, rs, fc); err != nil {
		a.fail(w, err)
		return
	}
	w.Header().Set("Content-Type", "image/png")
	_, _ = w.Write(buf.Bytes())
}

// decode reads a JSON body into v; an empty body is fine when optional.
func decode(w http.ResponseWriter, r *http.Request, v any, optional bool) bool {
	r.Body = http.MaxBytesReader(w, r.Body, MaxBodyBytes)
	dec := json.NewDecoder(r.Body)
	dec.DisallowUnknownFields()
	err := dec.Decode(v)
	var tooBig *http.MaxBytesError
	switch {
	case err == nil:
		return true
	case optional && errors.Is(err, io.EOF):
		return true
	case errors.As(err, &tooBig):
		httpjson.WriteError(w, http.StatusRequestEntityTooLarge, fmt.Sprintf("body larger than %d bytes", MaxBodyBytes))
	default:
		httpjson.WriteError(w, http.StatusBadRequest, "bad JSON body: "+err.Error())
	}
	return false
}

// fail maps a journal error to an HTTP status; details of unexpected errors are logged,
// not shown.
func (a *api) fail(w http.ResponseWriter, err error) {
	switch {
	case errors.Is(err, journal.ErrNoRun):
		httpjson.WriteError(w, http.StatusNotFound, err.Error())
	case errors.Is(err, journal.ErrRunActive), errors.Is(err, journal.ErrStopped):
		httpjson.WriteError(w, http.StatusConflict, err.Error())
	case errors.Is(err, journal.ErrInvalid):
		httpjson.WriteError(w, http.StatusBadRequest, err.Error())
	case errors.Is(err, journal.ErrUnavailable), errors.Is(err, journal.ErrReadOnly):
		httpjson.WriteError(w, http.StatusServiceUnavailable, "the journal is not available; see the daemon log")
		a.log.Warn("runs API: journal unavailable", "err", err)
	default:
		a.log.Error("runs API", "err", err)
		httpjson.WriteError(w, http.StatusInternalServerError, "internal error; see the daemon log")
	}
}
