package main

import (
	"bufio"
	"encoding/json"
	"net/http"
	"net/http/httptest"
	"os"
	"os/exec"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil/promlint"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/notify"
	"github.com/settle-lab/settle/predict"
)

// apiHookLog records webhook deliveries by event id.
type apiHookLog struct {
	mu     sync.Mutex
	counts map[string]int
	events []notify.Event
}

func (h *apiHookLog) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	var ev notify.Event
	if err := json.NewDecoder(r.Body).Decode(&ev); err != nil {
		http.Error(w, err.Error(), http.StatusBadRequest)
		return
	}
	h.mu.Lock()
	defer h.mu.Unlock()
	h.counts[ev.ID]++
	h.events = append(h.events, ev)
	w.WriteHeader(http.StatusNoContent)
}

func (h *apiHookLog) reached(channel string) bool {
	h.mu.Lock()
	defer h.mu.Unlock()
	for _, ev := range h.events {
		if ev.Kind == notify.KindReached && ev.Channel == channel && ev.Target == "handling" {
			return true
		}
	}
	return false
}

// TestAPIAgainstDemo runs the demo daemon with a token and a webhook, and checks the
// API, the event stream, the token rule, the webhook and the exposition (promlint and
// promtool) on the live server.
func TestAPIAgainstDemo(t *testing.T) {
	hooks := &apiHookLog{counts: map[string]int{}}
	recv := httptest.NewServer(hooks)
	defer recv.Close()
	base, cfg := runDemoDaemon(t, func(c *config.Config) {
		c.HTTP.Token = "demo-token"
		c.Notify.Webhooks = []notify.Webhook{{Name: "bench", URL: recv.URL, Events: []string{"reached", "fault"}}}
	})
	tile := "alumina-tile-d" // reaches 50 °C after about 13 s of wall time (cmd/settle/internal/sim)
	// Wait (a hang guard) for the tile's handling target to be reached.
	waitFor(t, base, 90*time.Second, func(m map[string]float64) bool {
		return m[`settle_target_reached{channel="`+tile+`",target="handling"}`] == 1
	})

	var list exporter.ChannelsResponse
	apiFetch(t, base+"/api/v1/channels", 200, &list)
	if len(list.Channels) != len(cfg.Channels) {
		t.Fatalf("API lists %d channels, config has %d", len(list.Channels), len(cfg.Channels))
	}
	var detail exporter.ChannelDetail
	apiFetch(t, base+"/api/v1/channels/"+tile, 200, &detail)
	if detail.Forecast == nil || len(detail.Forecast.Parameters) < 2 || detail.Logger != "rack2" || detail.History < 10 {
		t.Fatalf("detail = %+v", detail)
	}
	stderrs := 0
	for _, p := range detail.Forecast.Parameters {
		if p.StdErr != nil {
			stderrs++
		}
	}
	if stderrs == 0 || len(detail.Notes) == 0 || len(detail.Cautions) != len(predict.HandlingCautions) {
		t.Errorf("detail: %d standard errors, notes %v, %d cautions", stderrs, detail.Notes, len(detail.Cautions))
	}
	var series exporter.SeriesResponse
	apiFetch(t, base+"/api/v1/channels/"+tile+"/series?max_points=50", 200, &series)
	if len(series.Readings) != 50 || series.Total <= 50 || len(series.Curve) < 10 || len(series.Targets) != 2 {
		t.Errorf("series: %d of %d readings, %d curve points, %d targets", len(series.Readings), series.Total, len(series.Curve), len(series.Targets))
	}
	apiFetch(t, base+"/api/v1/channels/nope/series", 404, nil)
	apiFetch(t, base+"/api/v1/channels/"+tile+"/series?from=soon", 400, nil)

	apiStream(t, base)
	apiToken(t, base)
	apiExposition(t, base)

	// The webhook got the tile's "reached" once, and no event twice.
	deadline := time.Now().Add(10 * time.Second)
	for !hooks.reached(tile) && time.Now().Before(deadline) {
		time.Sleep(50 * time.Millisecond)
	}
	if !hooks.reached(tile) {
		t.Errorf("the webhook never got %s reaching handling", tile)
	}
	hooks.mu.Lock()
	defer hooks.mu.Unlock()
	for id, n := range hooks.counts {
		if n != 1 && !strings.HasPrefix(id, "test/") {
			t.Errorf("event %s delivered %d times", id, n)
		}
	}
}

func apiFetch(t *testing.T, url string, want int, v any) {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	if resp.StatusCode != want {
		t.Fatalf("GET %s = %d, want %d", url, resp.StatusCode, want)
	}
	if v == nil {
		v = &httpjson.Error{}
	}
	if err := json.NewDecoder(resp.Body).Decode(v); err != nil {
		t.Fatalf("GET %s: %v", url, err)
	}
}

// apiStream reads the event stream until it has seen the channel list and readings.
func apiStream(t *testing.T, base string) {
	t.Helper()
	resp, err := http.Get(base + "/api/v1/events")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	sc := bufio.NewScanner(resp.Body)
	sc.Buffer(make([]byte, 1<<20), 1<<20)
	seen := map[string]bool{}
	for lines := 0; sc.Scan() && lines < 10000 && !(seen["channels"] && seen["reading"]); lines++ {
		if name, ok := strings.CutPrefix(sc.Text(), "event: "); ok {
			seen[name] = true
		}
	}
	if !seen["channels"] || !seen["reading"] {
		t.Errorf("event stream gave %v, want channels and reading", seen)
	}
}

// apiToken checks that a state change needs the configured token.
func apiToken(t *testing.T, base string) {
	t.Helper()
	for _, c := range []struct {
		auth string
		want int
	}{{"", 401}, {"Bearer wrong", 403}, {"Bearer demo-token", 202}} {
		req, _ := http.NewRequest("POST", base+"/api/v1/notify/test", strings.NewReader(`{"webhook":"bench"}`))
		if c.auth != "" {
			req.Header.Set("Authorization", c.auth)
		}
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		resp.Body.Close()
		if resp.StatusCode != c.want {
			t.Errorf("POST notify/test with %q = %d, want %d", c.auth, resp.StatusCode, c.want)
		}
	}
}

// apiExposition lints the live /metrics with client_golang's promlint and with
// `promtool check metrics` (Debian's prometheus package); promtool may be absent
// locally, never under CI=true.
func apiExposition(t *testing.T, base string) {
	t.Helper()
	resp, err := http.Get(base + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	var body strings.Builder
	_, err = bufio.NewReader(resp.Body).WriteTo(&body)
	resp.Body.Close()
	if err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"settle_notify_sent_total", "settle_notify_failures_total", "settle_target_reached"} {
		if !strings.Contains(body.String(), name) {
			t.Errorf("/metrics has no %s", name)
		}
	}
	problems, err := promlint.New(strings.NewReader(body.String())).Lint()
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range problems {
		t.Errorf("promlint %s: %s", p.Metric, p.Text)
	}
	promtool, err := exec.LookPath("promtool")
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatal("promtool is not installed, and CI=true requires the check (apt-get install prometheus)")
		}
		t.Log("promtool is not installed; skipping `promtool check metrics`")
		return
	}
	cmd := exec.Command(promtool, "check", "metrics")
	cmd.Stdin = strings.NewReader(body.String())
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Errorf("promtool check metrics: %v\n%s", err, out)
	}
}
