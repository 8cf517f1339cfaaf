package daq

import (
	"context"
	"fmt"
	"log/slog"
	"time"
)

// LineSource reads a logger that sends delimiter-separated text lines (config format
// "line") on a serial port. It implements Source and StatsReporter.
type LineSource struct {
	name   string
	parser *LineParser
	port   serialLines
	status *portStatus
	log    *slog.Logger

	lastWarn time.Time // last parse-error warning, to keep a noisy line from flooding logs
}

var (
	_ Source        = (*LineSource)(nil)
	_ StatsReporter = (*LineSource)(nil)
)

// parseWarnEvery spaces out parse-error warnings; every error is still counted.
const parseWarnEvery = 10 * time.Second

// NewLineSource checks cfg and returns a source for it; nothing is opened until Run.
// Log lines name the port; the caller adds the logger name to log (as NewSource's
// callers do with log.With("logger", name)). A nil log discards log output.
func NewLineSource(cfg Logger, log *slog.Logger) (*LineSource, error) {
	if cfg.Format != "line" {
		return nil, fmt.Errorf("logger %q: format %q: the line source reads format \"line\"", cfg.Name, cfg.Format)
	}
	if cfg.Port == "" {
		return nil, fmt.Errorf("logger %q: port: must not be empty", cfg.Name)
	}
	if cfg.Baud < 0 {
		return nil, fmt.Errorf("logger %q: baud %d: must be positive", cfg.Name, cfg.Baud)
	}
	parser, err := NewLineParserFor(cfg)
	if err != nil {
		return nil, err
	}
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	baud := cfg.Baud
	if baud == 0 {
		baud = DefaultBaud
	}
	status := &portStatus{s: PortStats{Logger: cfg.Name, Port: cfg.Port}}
	return &LineSource{
		name:   cfg.Name,
		parser: parser,
		port:   serialLines{path: cfg.Port, baud: baud, open: openSerial, status: status, log: log},
		status: status,
		log:    log,
	}, nil
}

// Name returns the logger name.
func (s *LineSource) Name() string { return s.name }

// Stats returns a snapshot of the port counters; it is safe for concurrent use.
func (s *LineSource) Stats() PortStats { return s.status.snapshot() }

// Run reads lines until ctx ends, sending one Reading per configured column on out. A
// bad line is counted and logged; a lost port is reopened with back-off. Run returns
// ctx.Err().
func (s *LineSource) Run(ctx context.Context, out chan<- Reading) error {
	var buf []Reading
	return s.port.Run(ctx, func(line []byte, received time.Time) {
		var err error
		buf, err = s.parser.AppendParse(buf[:0], line, received)
		if err != nil {
			s.parseError(line, err, received)
			return
		}
		if len(buf) == 0 {
			return // blank or comment line
		}
		s.status.lastReading(received)
		for _, r := range buf {
			select {
			case out <- r:
			case <-ctx.Done():
				return
			}
		}
	})
}

func (s *LineSource) parseError(line []byte, err error, now time.Time) {
	s.status.parseErrors(1)
	if now.Sub(s.lastWarn) < parseWarnEvery {
		return
	}
	s.lastWarn = now
	s.log.Warn("unreadable line", "err", err, "line", truncate(line, 80),
		"parse_errors_total", s.status.snapshot().ParseErrors)
}

func truncate(b []byte, n int) string {
	if len(b) > n {
		return string(b[:n]) + "…"
	}
	return string(b)
}
