package exporter

import (
	"encoding/json"
	"github.com/settle-lab/settle/predict"
	"net/http"
	"net/http/httptest"
	"path/filepath"
	"testing"
	"time"
)

func TestChannelsGolden(t *testing.T) {
	body, err := json.MarshalIndent(Channels(testState(), t0.Add(8*time.Minute+5*time.Second)), "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	compareGolden(t, filepath.Join("..", "testdata", "exporter", "channels.json"), append(body, '\n'))
}

func TestChannelsCautionsOnHandlingTargets(t *testing.T) {
	resp := Channels(testState(), t0)
	if len(resp.Channels) != 2 {
		t.Fatalf("channels = %d, want 2", len(resp.Channels))
	}
	steel, tile := resp.Channels[0], resp.Channels[1]
	if len(steel.Cautions) != len(predict.HandlingCautions) {
		t.Errorf("steel has a handling target but %d cautions", len(steel.Cautions))
	}
	if tile.Cautions != nil || tile.Forecast != nil {
		t.Errorf("tile has no forecast, got cautions %v forecast %v", tile.Cautions, tile.Forecast)
	}
	if tile.Latest == nil || tile.Latest.Status != "open" || tile.Latest.Celsius != nil {
		t.Errorf("tile latest = %+v, want open with no temperature", tile.Latest)
	}
}

func TestHandlerRoutes(t *testing.T) {
	s := testState()
	srv := httptest.NewServer(NewHandler(s, NewRegistry(s), Options{}))
	defer srv.Close()
	cases := []struct {
		method, path string
		want         int
	}{
		{"GET", "/metrics", 200},
		{"GET", "/api/v1/channels", 200},
		{"GET", "/healthz", 200},
		{"GET", "/", 200},
		{"POST", "/api/v1/channels", 403}, // no token configured: refused before routing
		{"GET", "/api/v1/../../etc/passwd", 404},
		{"GET", "/nope", 404},
	}
	for _, c := range cases {
		req, _ := http.NewRequest(c.method, srv.URL+c.path, nil)
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		resp.Body.Close()
		if resp.StatusCode != c.want {
			t.Errorf("%s %s = %d, want %d", c.method, c.path, resp.StatusCode, c.want)
		}
	}
}
