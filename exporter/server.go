package exporter

import (
	"net/http"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"
)

// NewRegistry returns a registry holding the settle collector over s plus the Go
// runtime and process collectors.
func NewRegistry(s State) *prometheus.Registry {
	reg := prometheus.NewRegistry()
	reg.MustRegister(NewCollector(s),
		collectors.NewGoCollector(),
		collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	return reg
}

// NewHandler returns the daemon's HTTP handler: /metrics, /api/v1/channels, /healthz
// and an index page. Only GET and HEAD are served.
func NewHandler(s State, reg *prometheus.Registry) http.Handler {
	mux := http.NewServeMux()
	mux.Handle("GET /metrics", promhttp.HandlerFor(reg, promhttp.HandlerOpts{
		Registry: reg, MaxRequestsInFlight: 4, Timeout: 10 * time.Second,
	}))
	mux.HandleFunc("GET /api/v1/channels", func(w http.ResponseWriter, r *http.Request) {
		writeJSON(w, http.StatusOK, Channels(s, time.Now()))
	})
	mux.HandleFunc("GET /healthz", func(w http.ResponseWriter, r *http.Request) {
		writeJSON(w, http.StatusOK, map[string]string{"status": "ok"})
	})
	mux.HandleFunc("GET /{$}", func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "text/plain; charset=utf-8")
		_, _ = w.Write([]byte("settle\n\n/metrics          Prometheus metrics\n/api/v1/channels  channels, forecasts and targets (JSON)\n/healthz          liveness\n"))
	})
	return mux
}
