package exporter

import (
	"context"
	"crypto/tls"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"sync"
	"time"
)

// Server is the daemon's HTTP server with the timeouts a long-running lab service
// needs against slow or hostile clients.
type Server struct {
	srv *http.Server
	opt ServerOptions
	bg  background

	mu      sync.Mutex // guards started against a Shutdown racing Serve
	started bool
	lim     *limitListener // the listener Serve wraps, for OpenConns
	ctx     context.Context
	stop    context.CancelFunc
	wg      sync.WaitGroup
}

// background is implemented by a handler with work of its own (Handler: the poller
// behind the event stream and the notifications). The server runs it while serving.
type background interface {
	Run(ctx context.Context)
	CloseStreams()
	logger() *slog.Logger
}

// ServerOptions configures NewServer. Zero timeouts take the defaults given.
type ServerOptions struct {
	// TLSCert and TLSKey are PEM files; when both are set Serve speaks HTTPS.
	TLSCert, TLSKey string
	// ReadHeaderTimeout bounds reading a request's headers (default 5 s).
	ReadHeaderTimeout time.Duration
	// ReadTimeout bounds reading a whole request (default 10 s).
	ReadTimeout time.Duration
	// WriteTimeout bounds writing a response (default 30 s; the event stream sets its
	// own deadline per event instead).
	WriteTimeout time.Duration
	// IdleTimeout bounds an idle keep-alive connection (default 60 s).
	IdleTimeout time.Duration
	// MaxConns bounds the connections held open at once (default DefaultMaxConns);
	// at the limit a new connection replaces the longest-idle one.
	MaxConns int
}

// NewServer returns a server for h. If h is a *Handler, the server also runs its
// poller and notifications while serving and ends its event streams on Shutdown.
func NewServer(h http.Handler, opt ServerOptions) *Server {
	def := func(d, v time.Duration) time.Duration {
		if d > 0 {
			return d
		}
		return v
	}
	s := &Server{opt: opt, srv: &http.Server{
		Handler:           h,
		ReadHeaderTimeout: def(opt.ReadHeaderTimeout, 5*time.Second),
		ReadTimeout:       def(opt.ReadTimeout, 10*time.Second),
		WriteTimeout:      def(opt.WriteTimeout, 30*time.Second),
		IdleTimeout:       def(opt.IdleTimeout, 60*time.Second),
		MaxHeaderBytes:    16 << 10,
	}}
	if s.opt.MaxConns <= 0 {
		s.opt.MaxConns = DefaultMaxConns
	}
	s.ctx, s.stop = context.WithCancel(context.Background())
	if bg, ok := h.(background); ok {
		s.bg = bg
		s.srv.RegisterOnShutdown(bg.CloseStreams)
		s.srv.ErrorLog = slog.NewLogLogger(bg.logger().Handler(), slog.LevelWarn)
	}
	return s
}

// TLS reports whether the server speaks HTTPS.
func (s *Server) TLS() bool { return s.opt.TLSCert != "" && s.opt.TLSKey != "" }

// Serve accepts connections on ln until Shutdown, holding at most MaxConns open. With
// TLS configured it loads the certificate first and fails, naming the files, if they
// cannot be used.
func (s *Server) Serve(ln net.Listener) error {
	if s.TLS() {
		cert, err := tls.LoadX509KeyPair(s.opt.TLSCert, s.opt.TLSKey)
		if err != nil {
			return fmt.Errorf("TLS certificate %s and key %s (config keys http.tls_cert, http.tls_key): %w",
				s.opt.TLSCert, s.opt.TLSKey, err)
		}
		s.srv.TLSConfig = &tls.Config{Certificates: []tls.Certificate{cert}, MinVersion: tls.VersionTLS12}
	}
	s.mu.Lock()
	if s.bg != nil && !s.started && s.ctx.Err() == nil {
		s.started = true
		s.wg.Add(1)
		go func() { defer s.wg.Done(); s.bg.Run(s.ctx) }()
	}
	s.mu.Unlock()
	lim := newLimitListener(ln, s.opt.MaxConns)
	s.mu.Lock()
	s.lim = lim
	s.mu.Unlock()
	s.srv.ConnState = lim.track
	ln = lim
	var err error
	if s.TLS() {
		err = s.srv.ServeTLS(ln, "", "")
	} else {
		err = s.srv.Serve(ln)
	}
	if errors.Is(err, http.ErrServerClosed) {
		return nil
	}
	return err
}

// OpenConns is the number of HTTP connections the server holds open.
func (s *Server) OpenConns() int {
	s.mu.Lock()
	lim := s.lim
	s.mu.Unlock()
	if lim == nil {
		return 0
	}
	return lim.open()
}

// Shutdown stops accepting connections, ends event streams and background work, and
// waits for requests in flight until ctx ends.
func (s *Server) Shutdown(ctx context.Context) error {
	err := s.srv.Shutdown(ctx)
	s.mu.Lock()
	s.stop()
	s.mu.Unlock()
	s.wg.Wait()
	return err
}
