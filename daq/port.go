package daq

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"log/slog"
	"slices"
	"sync"
	"syscall"
	"time"

	"go.bug.st/serial"
)

// Port handling defaults.
const (
	// MaxLineBytes bounds one text line; a longer line is discarded and counted as a
	// parse error (a logger at the wrong baud rate sends long runs without newlines).
	MaxLineBytes = 4096
	// readTimeout bounds one Read so that the loop sees its context end promptly.
	readTimeout = 200 * time.Millisecond
	// backoffMin and backoffMax bound the wait before reopening a lost port.
	backoffMin = 100 * time.Millisecond
	// The cap is short on purpose: a failed open of a missing device costs next to
	// nothing, and it bounds how long a replugged adapter waits to be read again
	// (about a second, however long the cable was out).
	backoffMax = time.Second
	// selectFDLimit is FD_SETSIZE: go.bug.st/serial waits with select(), whose fd_set
	// holds descriptors below 1024 only; a larger one makes its Read panic.
	selectFDLimit = 1024
	// portFDs is how many descriptors serial.Open takes: the device and a pipe pair.
	portFDs = 3
)

// errSelectLimit reports that opening a port would give a descriptor select() cannot
// watch.
var errSelectLimit = errors.New("daq: too many open files for select() (descriptor would be >= 1024)")

// portOpener opens a serial port; tests substitute a fake.
type portOpener func(path string, mode *serial.Mode) (serial.Port, error)

// reserveFDs is how many low descriptors the reserve holds: four ports' worth.
const reserveFDs = 4 * portFDs

// fdReserve holds a few low descriptors (on /dev/null) for serial ports.
// go.bug.st/serial opens the device and then a pipe with open(2) and pipe(2), which
// return the lowest free descriptors, and watches them with select(), which takes only
// descriptors below 1024. Network clients that arrive while a port is out can take
// every low descriptor; the reserve keeps some back: releasing them just before
// serial.Open hands them to the port, and they are taken again after it opens and
// after it closes.
type fdReserve struct {
	mu  sync.Mutex
	fds []int // ascending
}

var reserve fdReserve

// ReserveDescriptors takes the serial ports' reserve of low descriptors now. Call it at
// start-up, before network listeners accept clients; opening a port does it otherwise.
func ReserveDescriptors() {
	reserve.mu.Lock()
	defer reserve.mu.Unlock()
	reserve.fill()
}

// fill tops the reserve up with descriptors below the select() limit.
func (r *fdReserve) fill() {
	for len(r.fds) < reserveFDs {
		fd, err := syscall.Open("/dev/null", syscall.O_RDONLY|syscall.O_CLOEXEC, 0)
		if err != nil {
			return
		}
		if fd+portFDs > selectFDLimit {
			syscall.Close(fd)
			return
		}
		r.fds = append(r.fds, fd)
	}
	slices.Sort(r.fds)
}

// release closes the lowest n reserved descriptors so the next opens get them.
func (r *fdReserve) release(n int) {
	n = min(n, len(r.fds))
	for _, fd := range r.fds[:n] {
		syscall.Close(fd)
	}
	r.fds = slices.Delete(r.fds, 0, n)
}

// openSerial opens a real serial port on low descriptors.
//
// go.bug.st/serial does not expose the port's descriptor, so the guard is threefold:
// the port opens on descriptors released from the reserve; before opening, probe the
// lowest free descriptor (the kernel hands out the lowest free one, so the port and its
// pipe get this one and the next ones) and refuse when they would reach 1024; and
// safeRead turns a panic from Read into an error, should another goroutine's open race
// the probe.
func openSerial(path string, mode *serial.Mode) (serial.Port, error) {
	reserve.mu.Lock()
	defer reserve.mu.Unlock()
	reserve.fill()
	reserve.release(portFDs)
	defer reserve.fill()
	if err := checkSelectHeadroom(); err != nil {
		return nil, err
	}
	p, err := serial.Open(path, mode)
	if err != nil {
		return nil, err
	}
	return reservedPort{p}, nil
}

// reservedPort takes the reserve back up when the port closes, before network
// clients can take the port's descriptors.
type reservedPort struct{ serial.Port }

func (p reservedPort) Close() error {
	err := p.Port.Close()
	reserve.mu.Lock()
	reserve.fill()
	reserve.mu.Unlock()
	return err
}

// checkSelectHeadroom returns errSelectLimit when the next portFDs descriptors would
// not all be below selectFDLimit.
func checkSelectHeadroom() error {
	fd, err := syscall.Open("/dev/null", syscall.O_RDONLY|syscall.O_CLOEXEC, 0)
	if err != nil {
		return nil // cannot probe; safeRead still guards
	}
	syscall.Close(fd)
	if fd+portFDs > selectFDLimit {
		return fmt.Errorf("%w: lowest free descriptor is %d", errSelectLimit, fd)
	}
	return nil
}

// safeRead calls p.Read and turns a panic (the select() descriptor limit) into an error.
func safeRead(p serial.Port, buf []byte) (n int, err error) {
	defer func() {
		if r := recover(); r != nil {
			n, err = 0, fmt.Errorf("%w: read panicked: %v", errSelectLimit, r)
		}
	}()
	return p.Read(buf)
}

// backoff is an exponential wait: min, 2·min, … capped at max; reset after success.
type backoff struct {
	min, max, next time.Duration
}

// Next returns the wait before the next attempt and doubles the one after it.
func (b *backoff) Next() time.Duration {
	d := max(b.next, b.min)
	b.next = min(2*d, b.max)
	return d
}

// Reset makes the next wait the minimum again.
func (b *backoff) Reset() { b.next = 0 }

// lineSplitter cuts a byte stream into lines of at most limit bytes (without the '\n').
type lineSplitter struct {
	buf        []byte
	limit      int
	discarding bool // inside an overlong line: skip to the next '\n'
}

// Feed splits p into lines, calling emit for each complete one (the slice is only valid
// during the call), and returns how many overlong lines it discarded.
func (s *lineSplitter) Feed(p []byte, emit func(line []byte)) (overlong int) {
	for len(p) > 0 {
		i := bytes.IndexByte(p, '\n')
		chunk := p
		if i >= 0 {
			chunk = p[:i]
		}
		if !s.discarding {
			if len(s.buf)+len(chunk) > s.limit {
				s.buf = s.buf[:0]
				s.discarding = true
				overlong++
			} else {
				s.buf = append(s.buf, chunk...)
			}
		}
		if i < 0 {
			return overlong
		}
		if !s.discarding {
			emit(s.buf)
		}
		s.buf = s.buf[:0]
		s.discarding = false
		p = p[i+1:]
	}
	return overlong
}

// serialLines reads text lines from one serial port and survives its loss: on any
// error it closes the port, marks it down, backs off and reopens.
type serialLines struct {
	path   string
	baud   int
	open   portOpener
	status *portStatus
	log    *slog.Logger
}

// Run reads until ctx ends, calling handle for each line with the host receive time.
// It returns ctx.Err() and nothing else.
func (s *serialLines) Run(ctx context.Context, handle func(line []byte, received time.Time)) error {
	return keepOpen(ctx, s.path, s.status, s.log, func(ctx context.Context) (bool, error) {
		return s.session(ctx, handle)
	})
}

// keepOpen runs session (one open of the port, used until it fails) until ctx ends.
// After each session it marks the port down, counts a read error, backs off and
// reopens; the back-off starts again from its minimum after a session that worked (got
// data, or polled once) and after the first. It returns ctx.Err() and nothing else.
func keepOpen(ctx context.Context, path string, status *portStatus, log *slog.Logger, session func(context.Context) (worked bool, err error)) error {
	bo := backoff{min: backoffMin, max: backoffMax}
	for attempt := 0; ; attempt++ {
		if attempt > 0 {
			status.reconnect()
		}
		worked, err := session(ctx)
		status.setUp(false)
		if ctx.Err() != nil {
			return ctx.Err()
		}
		status.readError()
		level := slog.LevelDebug // repeated failures while the cable is out: quiet
		if worked || attempt == 0 {
			bo.Reset()
			level = slog.LevelWarn
		}
		wait := bo.Next()
		log.Log(ctx, level, "serial port down; will reopen", "port", path, "err", err, "retry_in", wait)
		select {
		case <-ctx.Done():
			return ctx.Err()
		case <-time.After(wait):
		}
	}
}

// session opens the port once and reads lines until an error or the end of ctx. It
// reports whether any data arrived.
func (s *serialLines) session(ctx context.Context, handle func([]byte, time.Time)) (gotData bool, err error) {
	port, err := s.open(s.path, &serial.Mode{BaudRate: s.baud})
	if err != nil {
		return false, fmt.Errorf("open serial port %s: %w", s.path, err)
	}
	defer port.Close()
	if err := port.SetReadTimeout(readTimeout); err != nil {
		return false, fmt.Errorf("set read timeout on %s: %w", s.path, err)
	}
	_ = port.ResetInputBuffer() // stale bytes from before the open are not worth a line
	s.status.setUp(true)
	s.log.Info("serial port open", "port", s.path, "baud", s.baud)
	buf := make([]byte, 1024)
	split := lineSplitter{limit: MaxLineBytes}
	for ctx.Err() == nil {
		n, err := safeRead(port, buf)
		if err != nil {
			return gotData, fmt.Errorf("read serial port %s: %w", s.path, err)
		}
		if n == 0 {
			continue // read timed out: no data yet
		}
		gotData = true
		now := time.Now()
		if dropped := split.Feed(buf[:n], func(line []byte) { handle(line, now) }); dropped > 0 {
			s.status.parseErrors(uint64(dropped))
			s.log.Warn("overlong line discarded", "port", s.path, "limit_bytes", MaxLineBytes)
		}
	}
	return gotData, nil
}
