package daq

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"time"

	"go.bug.st/serial"
)

// errTransient marks a poll failure after which the port is still usable (a late,
// garbled or refused reply); any other poll error closes and reopens the port.
var errTransient = errors.New("daq: transient poll failure")

// safePort is a serial port whose Read turns the select() descriptor panic into an
// error.
type safePort struct{ serial.Port }

// Read reads through safeRead.
func (p safePort) Read(b []byte) (int, error) { return safeRead(p.Port, b) }

// pollPort keeps a serial port open for a driver that asks before it reads (query,
// Modbus) and calls poll once per interval. On a port error it closes the port, marks
// it down, backs off and reopens (keepOpen).
type pollPort struct {
	path     string
	mode     serial.Mode
	interval time.Duration
	open     portOpener
	status   *portStatus
	log      *slog.Logger
}

// pollFunc asks once and reads the answer on port. An error wrapping errTransient is
// counted and logged; any other error ends the session and the port is reopened.
type pollFunc func(ctx context.Context, port serial.Port) error

// Run polls until ctx ends; it returns ctx.Err().
func (p *pollPort) Run(ctx context.Context, poll pollFunc) error {
	return keepOpen(ctx, p.path, p.status, p.log, func(ctx context.Context) (bool, error) {
		return p.session(ctx, poll)
	})
}

// session opens the port once and polls until a port error or the end of ctx. It
// reports whether any poll succeeded.
func (p *pollPort) session(ctx context.Context, poll pollFunc) (polled bool, err error) {
	mode := p.mode
	port, err := p.open(p.path, &mode)
	if err != nil {
		return false, fmt.Errorf("open serial port %s: %w", p.path, err)
	}
	defer port.Close()
	_ = port.ResetInputBuffer()
	p.status.setUp(true)
	p.log.Info("serial port open", "port", p.path, "baud", p.mode.BaudRate)
	tick := time.NewTicker(p.interval)
	defer tick.Stop()
	var lastWarn time.Time
	for {
		err := poll(ctx, safePort{port})
		switch {
		case err == nil:
			polled = true
		case errors.Is(err, errTransient):
			if time.Since(lastWarn) >= parseWarnEvery {
				lastWarn = time.Now()
				p.log.Warn("poll failed; port kept open", "port", p.path, "err", err)
			}
		default:
			return polled, err
		}
		select {
		case <-ctx.Done():
			return polled, nil
		case <-tick.C:
		}
	}
}

// parity maps the config's parity letter to go.bug.st/serial's.
func parity(letter string) serial.Parity {
	switch letter {
	case "N":
		return serial.NoParity
	case "O":
		return serial.OddParity
	}
	return serial.EvenParity
}

// checkPort checks the settings every serial driver shares.
func checkPort(name, port string, baud int) (int, error) {
	if port == "" {
		return 0, fmt.Errorf("logger %q: port: must not be empty", name)
	}
	if baud < 0 {
		return 0, fmt.Errorf("logger %q: baud %d: must be positive", name, baud)
	}
	if baud == 0 {
		baud = DefaultBaud
	}
	return baud, nil
}

// orDefault returns d, or def when d is not positive.
func orDefault(d, def time.Duration) time.Duration {
	if d <= 0 {
		return def
	}
	return d
}
