package daq

import (
	"errors"
	"fmt"
	"log/slog"

	"github.com/settle-lab/settle/config"
)

// Factory makes a Source for one logger section of the configuration.
type Factory func(cfg config.Logger, log *slog.Logger) (Source, error)

// factories maps a config.Logger.Format to its driver. Drivers add themselves with
// Register in an init function.
var factories = map[string]Factory{
	"line": func(cfg config.Logger, log *slog.Logger) (Source, error) {
		return NewLineSource(cfg, log)
	},
	"query": func(cfg config.Logger, log *slog.Logger) (Source, error) {
		return NewQuerySource(cfg, log)
	},
	"modbus": func(cfg config.Logger, log *slog.Logger) (Source, error) {
		return NewModbusSource(cfg, log)
	},
}

// Register makes a driver available under a format name. It panics if the name is
// taken or f is nil (a programming error, found at start-up).
func Register(format string, f Factory) {
	if f == nil {
		panic("daq: Register " + format + ": nil factory")
	}
	if _, dup := factories[format]; dup {
		panic("daq: Register " + format + ": format already registered")
	}
	factories[format] = f
}

// ErrUnknownFormat reports a logger format no driver is registered for.
var ErrUnknownFormat = errors.New("daq: unknown logger format")

// NewSource returns the driver for cfg.Format. An unknown format is an error naming the
// logger and the format.
func NewSource(cfg config.Logger, log *slog.Logger) (Source, error) {
	f, ok := factories[cfg.Format]
	if !ok {
		return nil, fmt.Errorf("logger %q: format %q: %w", cfg.Name, cfg.Format, ErrUnknownFormat)
	}
	return f(cfg, log)
}
