package exporter

import (
	"context"
	"errors"
	"net"
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

// Server is the daemon's HTTP server with the timeouts a long-running lab service
// needs against slow or hostile clients.
type Server struct {
	srv *http.Server
}

// ServerOptions configures NewServer.
type ServerOptions struct {
	// TLSCert and TLSKey are PEM files; when both are set Serve speaks HTTPS.
	TLSCert, TLSKey string
}

// NewServer returns a server for h.
func NewServer(h http.Handler, opt ServerOptions) *Server {
	return &Server{srv: &http.Server{
		Handler:           h,
		ReadHeaderTimeout: 5 * time.Second,
		ReadTimeout:       10 * time.Second,
		WriteTimeout:      30 * time.Second,
		IdleTimeout:       60 * time.Second,
		MaxHeaderBytes:    16 << 10,
	}}
}

// Serve accepts connections on ln until Shutdown.
func (s *Server) Serve(ln net.Listener) error {
	err := s.srv.Serve(ln)
	if errors.Is(err, http.ErrServerClosed) {
		return nil
	}
	return err
}

// Shutdown stops accepting connections and waits for requests in flight until ctx ends.
func (s *Server) Shutdown(ctx context.Context) error { return s.srv.Shutdown(ctx) }
