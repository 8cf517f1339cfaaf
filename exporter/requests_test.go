package exporter_test

import (
	"bytes"
	"encoding/json"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/runs"
)

const token = "s3cret"

// apiWithRuns is the daemon's handler with the real runs API over a real journal file
// (SQLite in a temporary directory); everything either logs goes to logs.
func apiWithRuns(t *testing.T, logs *bytes.Buffer) http.Handler {
	t.Helper()
	log := slog.New(slog.NewTextHandler(logs, nil))
	j, err := journal.Open(t.TempDir(), journal.Options{CommitInterval: time.Hour, Logger: log})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { j.Close() })
	runs := runs.API(j, runs.APIOptions{Token: token, Logger: log})
	return exporter.NewHandler(exporter.State{}, exporter.NewRegistry(exporter.State{}), exporter.Options{Token: token, Runs: runs, Log: log})
}

func request(h http.Handler, method, target, body string) *httptest.ResponseRecorder {
	req := httptest.NewRequest(method, target, strings.NewReader(body))
	req.Header.Set("Authorization", "Bearer "+token)
	w := httptest.NewRecorder()
	h.ServeHTTP(w, req)
	return w
}

// jsonError returns the message of a documented error body ({"error": "..."}), failing
// the test when the body is anything else.
func jsonError(t *testing.T, w *httptest.ResponseRecorder) string {
	t.Helper()
	if ct := w.Header().Get("Content-Type"); !strings.HasPrefix(ct, "application/json") {
		t.Fatalf("error answer has Content-Type %q, want JSON: %s", ct, w.Body)
	}
	var e httpjson.Error
	if err := json.Unmarshal(w.Body.Bytes(), &e); err != nil || e.Error == "" {
		t.Fatalf("error body %q is not {\"error\": \"...\"}", w.Body)
	}
	return e.Error
}

// Trailing data after a JSON body is refused before any route acts on it: no run is
// started by a body that carries two objects, and the notification test is not sent.
func TestTrailingDataAfterJSONBody(t *testing.T) {
	var logs bytes.Buffer
	h := apiWithRuns(t, &logs)
	cases := []struct {
		name, target, body string
		want               int
		errText            string
	}{
		{"second object", "/api/v1/runs", `{"channel":"c1","specimen":"S-1"}{"channel":"c2","specimen":"S-2"}`, 400, "after the JSON value (offset 33)"}, // the object is 33 bytes,
		{"garbage", "/api/v1/runs", `{"channel":"c1","specimen":"S-1"} x`, 400, "after the JSON value"},
		{"second value on notify", "/api/v1/notify/test", `{} []`, 400, "after the JSON value"},
		{"trailing white space is fine", "/api/v1/runs", "{\"channel\":\"c1\",\"specimen\":\"S-1\"}\n\t ", 201, ""},
		{"not JSON at all: the route's own message", "/api/v1/runs", `channel=c1`, 400, "bad JSON body"},
		{"over 64 KiB", "/api/v1/runs", `{"specimen":"` + strings.Repeat("x", exporter.MaxBodyBytes) + `"}`, 413, "64 KiB"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			w := request(h, "POST", c.target, c.body)
			if w.Code != c.want {
				t.Fatalf("POST %s = %d %s, want %d", c.target, w.Code, w.Body, c.want)
			}
			if c.want >= 400 {
				if msg := jsonError(t, w); !strings.Contains(msg, c.errText) {
					t.Errorf("error %q, want it to contain %q", msg, c.errText)
				}
			}
		})
	}
	w := request(h, "GET", "/api/v1/runs", "")
	var list struct{ Runs []struct{ Channel string } }
	if err := json.Unmarshal(w.Body.Bytes(), &list); err != nil || len(list.Runs) != 1 || list.Runs[0].Channel != "c1" {
		t.Errorf("runs after the requests: %s, want only the one clean start (c1)", w.Body)
	}
}

// A 60 KiB specimen id is refused with a 400 naming the limit, and neither the answer
// nor the log carries it whole.
func TestLongSpecimenRefused(t *testing.T) {
	var logs bytes.Buffer
	h := apiWithRuns(t, &logs)
	huge := strings.Repeat("S", 60<<10)
	w := request(h, "POST", "/api/v1/runs", `{"channel":"c1","specimen":"`+huge+`"}`)
	if w.Code != 400 {
		t.Fatalf("60 KiB specimen: %d %.200s, want 400", w.Code, w.Body)
	}
	if msg := jsonError(t, w); !strings.Contains(msg, "over the limit of 128") || len(msg) > 200 {
		t.Errorf("error (%d bytes) %.300q, want the limit named in under 200 bytes", len(msg), msg)
	}
	if strings.Contains(logs.String(), strings.Repeat("S", 200)) {
		t.Errorf("the log carries the specimen id (%d bytes of log)", logs.Len())
	}
	ok := request(h, "POST", "/api/v1/runs", `{"channel":"c1","specimen":"`+strings.Repeat("S", 128)+`"}`)
	if ok.Code != 201 {
		t.Errorf("128-byte specimen: %d %s, want 201", ok.Code, ok.Body)
	}
}

// OPTIONS (and any method a path does not take) is answered in the documented JSON
// error format with an Allow header, on the daemon's own routes and on the runs API's;
// a path that does not exist is a JSON 404.
func TestOptionsAndMethodsAnswerJSON(t *testing.T) {
	var logs bytes.Buffer
	h := apiWithRuns(t, &logs)
	cases := []struct {
		method, target string
		want           int
		allow          string
	}{
		{"OPTIONS", "/api/v1/channels", 405, "GET, HEAD"},
		{"OPTIONS", "/metrics", 405, "GET, HEAD"},
		{"OPTIONS", "/api/v1/notify/test", 405, "POST"},
		{"OPTIONS", "/api/v1/runs", 405, "GET, HEAD, POST"},
		{"OPTIONS", "/api/v1/runs/x/stop", 405, "POST"},
		{"GET", "/api/v1/runs/x/stop", 405, "POST"},
		{"PUT", "/api/v1/runs/x", 405, "GET, HEAD"},
		{"GET", "/api/v1/runs/x/nope", 404, ""},
		{"OPTIONS", "*", 404, ""},
		{"OPTIONS", "/nope", 404, ""},
		{"GET", "/api/v1/notify/test", 405, "POST"},
		{"PUT", "/api/v1/channels", 405, "GET, HEAD"},
	}
	for _, c := range cases {
		w := request(h, c.method, c.target, "")
		if w.Code != c.want || w.Header().Get("Allow") != c.allow {
			t.Errorf("%s %s = %d Allow %q, want %d Allow %q", c.method, c.target, w.Code, w.Header().Get("Allow"), c.want, c.allow)
			continue
		}
		if msg := jsonError(t, w); c.want == 405 && !strings.Contains(msg, "allowed: "+c.allow) {
			t.Errorf("%s %s: error %q, want it to name the allowed methods", c.method, c.target, msg)
		}
	}
}
