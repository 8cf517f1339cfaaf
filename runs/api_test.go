package runs

import (
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
)

const testToken = "s3cret-token"

func do(t *testing.T, srv *httptest.Server, method, path, token, body string) (*http.Response, []byte) {
	t.Helper()
	req, err := http.NewRequest(method, srv.URL+path, strings.NewReader(body))
	if err != nil {
		t.Fatal(err)
	}
	if token != "" {
		req.Header.Set("Authorization", "Bearer "+token)
	}
	resp, err := srv.Client().Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	return resp, b
}

func TestRunsAPIStartStop(t *testing.T) {
	j := openJournal(t)
	srv := httptest.NewServer(API(j, APIOptions{Token: testToken, Logger: quietLog}))
	defer srv.Close()
	spec := `{"channel":"rack-1","specimen":"S-9","targets":[{"name":"handle","celsius":45,"handling":true}]}`
	for _, tc := range []struct {
		name, method, path, token, body string
		status                          int
		errPart                         string
	}{
		{"no token", "POST", "/api/v1/runs", "", spec, 401, "bearer"},
		{"wrong token", "POST", "/api/v1/runs", "nope", spec, 401, "bearer"},
		{"bad JSON", "POST", "/api/v1/runs", testToken, `{"channel":`, 400, "bad JSON"},
		{"unknown field", "POST", "/api/v1/runs", testToken, `{"channel":"a","specimen":"b","colour":"red"}`, 400, "colour"},
		{"no specimen", "POST", "/api/v1/runs", testToken, `{"channel":"a"}`, 400, "specimen is empty"},
		{"bad target", "POST", "/api/v1/runs", testToken, `{"channel":"a","specimen":"b","targets":[{"name":"x"}]}`, 400, "exactly one of celsius and within"},
		{"bad specimen", "POST", "/api/v1/runs", testToken, `{"channel":"a","specimen":"b","specimen_spec":"shape: cube\n"}`, 400, "specimen_spec"},
		{"too big", "POST", "/api/v1/runs", testToken, `{"description":"` + strings.Repeat("x", MaxBodyBytes) + `"}`, 413, "larger than"},
		{"start", "POST", "/api/v1/runs", testToken, spec, 201, ""},
		{"start again", "POST", "/api/v1/runs", testToken, spec, 409, "active run"},
		{"unknown run", "GET", "/api/v1/runs/nope", "", "", 404, "no such run"},
		{"bad limit", "GET", "/api/v1/runs?limit=x", "", "", 400, "limit"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			resp, b := do(t, srv, tc.method, tc.path, tc.token, tc.body)
			if resp.StatusCode != tc.status {
				t.Fatalf("status %d (%s), want %d", resp.StatusCode, b, tc.status)
			}
			if ct := resp.Header.Get("Content-Type"); !strings.HasPrefix(ct, "application/json") {
				t.Errorf("content type %q", ct)
			}
			if tc.errPart != "" {
				var e struct{ Error string }
				if err := json.Unmarshal(b, &e); err != nil || !strings.Contains(strings.ToLower(e.Error), strings.ToLower(tc.errPart)) {
					t.Errorf("error body %s, want it to mention %q", b, tc.errPart)
				}
			}
		})
	}
	run, err := j.ActiveRun("rack-1")
	if err != nil || run.Origin != "api" || run.Specimen != "S-9" {
		t.Fatalf("active run %+v, %v", run, err)
	}
	resp, b := do(t, srv, "GET", "/api/v1/runs?channel=rack-1&active=true", "", "")
	var list struct{ Runs []journal.Run }
	if resp.StatusCode != 200 || json.Unmarshal(b, &list) != nil || len(list.Runs) != 1 || list.Runs[0].ID != run.ID {
		t.Fatalf("list: %d %s", resp.StatusCode, b)
	}
	stop := fmt.Sprintf("/api/v1/runs/%s/stop", run.ID)
	if resp, _ := do(t, srv, "POST", stop, "", ""); resp.StatusCode != 401 {
		t.Errorf("stop without token: %d, want 401", resp.StatusCode)
	}
	if resp, b := do(t, srv, "POST", stop, testToken, ""); resp.StatusCode != 200 {
		t.Fatalf("stop: %d %s", resp.StatusCode, b)
	}
	if resp, _ := do(t, srv, "POST", stop, testToken, ""); resp.StatusCode != 409 {
		t.Errorf("second stop: %d, want 409", resp.StatusCode)
	}
	resp, b = do(t, srv, "GET", "/api/v1/runs/"+run.ID, "", "")
	var d RunDetail
	if resp.StatusCode != 200 || json.Unmarshal(b, &d) != nil || d.Run.Active() || d.Run.Summary == nil {
		t.Errorf("show stopped run: %d %s", resp.StatusCode, b)
	}
}

var quietLog = slog.New(slog.NewTextHandler(io.Discard, nil))

func TestRunsAPIChannelDefaults(t *testing.T) {
	j := openJournal(t)
	known := func(ch string) ([]predict.Target, bool) {
		switch ch {
		case "rack-1":
			return []predict.Target{{Name: "handle", Celsius: 45, Handling: true}, {Name: "settled", Celsius: math.NaN(), Within: 2}}, true
		case "rack-air":
			return nil, true
		}
		return nil, false
	}
	ambient := func(ch string) bool { return ch == "rack-air" }
	srv := httptest.NewServer(API(j, APIOptions{Token: testToken, Channel: known, Ambient: ambient, Logger: quietLog}))
	defer srv.Close()
	if resp, b := do(t, srv, "POST", "/api/v1/runs", testToken, `{"channel":"rack-9","specimen":"x"}`); resp.StatusCode != 400 || !strings.Contains(string(b), "unknown channel") {
		t.Errorf("unknown channel: %d %s, want 400", resp.StatusCode, b)
	}
	// The room's air holds no specimen: a run there is refused, and nothing is recorded.
	if resp, b := do(t, srv, "POST", "/api/v1/runs", testToken, `{"channel":"rack-air","specimen":"x"}`); resp.StatusCode != 400 || !strings.Contains(string(b), "ambient sensor") {
		t.Errorf("run on the ambient sensor: %d %s, want 400", resp.StatusCode, b)
	}
	if runs, err := j.Runs(journal.RunFilter{}); err != nil || len(runs) != 0 {
		t.Errorf("after the refused run: %d runs (%v)", len(runs), err)
	}
	resp, b := do(t, srv, "POST", "/api/v1/runs", testToken, `{"channel":"rack-1","specimen":"x"}`)
	var run journal.Run
	if resp.StatusCode != 201 || json.Unmarshal(b, &run) != nil {
		t.Fatalf("start: %d %s", resp.StatusCode, b)
	}
	ts, err := predict.ParseTargets(run.Targets)
	if err != nil || len(ts) != 2 || ts[0].Celsius != 45 || !ts[0].Handling || ts[1].Within != 2 || !ts[1].IsWithin() {
		t.Errorf("default targets %s → %+v, %v", run.Targets, ts, err)
	}
}

func TestRunsAPIWithoutTokenRefusesChanges(t *testing.T) {
	srv := httptest.NewServer(API(openJournal(t), APIOptions{Logger: quietLog}))
	defer srv.Close()
	resp, b := do(t, srv, "POST", "/api/v1/runs", "anything", `{"channel":"a","specimen":"b"}`)
	if resp.StatusCode != 403 || !strings.Contains(string(b), "no API token") {
		t.Errorf("POST with no token configured: %d %s, want 403", resp.StatusCode, b)
	}
}

func TestRunsAPIReportFiles(t *testing.T) {
	j := openJournal(t)
	run, _ := demoRun(t, j)
	srv := httptest.NewServer(API(j, APIOptions{Token: testToken, Logger: quietLog}))
	defer srv.Close()
	for _, tc := range []struct{ file, ctype, part string }{
		{"readings.csv", "text/csv", "time,elapsed_s,channel"},
		{"summary.json", "application/json", `"name": "lumped"`},
		{"figure.png", "image/png", "\x89PNG"},
	} {
		resp, b := do(t, srv, "GET", "/api/v1/runs/"+run.ID+"/"+tc.file, "", "")
		if resp.StatusCode != 200 || !strings.HasPrefix(resp.Header.Get("Content-Type"), tc.ctype) || !strings.Contains(string(b), tc.part) {
			t.Errorf("%s: %d %q, want 200 %s containing %q", tc.file, resp.StatusCode, resp.Header.Get("Content-Type"), tc.ctype, tc.part)
		}
	}
}
