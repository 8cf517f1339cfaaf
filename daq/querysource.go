package daq

import (
	"bytes"
	"cmp"
	"context"
	"errors"
	"fmt"
	"log/slog"
	"strings"
	"time"

	"go.bug.st/serial"
)

// ErrReplyTimeout reports a query reply that did not arrive complete in time.
var ErrReplyTimeout = errors.New("daq: query reply timed out")

// ReplyParser turns one reply of a query instrument into Readings: the reply is split
// by the separator and value n (1-based) goes to the channel its column names. Values
// are read, checked for open circuit and converted like line fields.
type ReplyParser struct {
	logger   string
	sep      []byte
	slot     []int // slot[i] is the column position of value i+1, or -1
	channels []string
	conv     *conversion
}

// NewReplyParser checks cfg.Query's columns and returns the reply parser of logger cfg.
func NewReplyParser(cfg Logger) (*ReplyParser, error) {
	q := cfg.Query
	p := &ReplyParser{logger: cfg.Name, sep: []byte(cmp.Or(q.Separator, ","))}
	if len(q.Columns) == 0 {
		return nil, fmt.Errorf("logger %q: query.columns: at least one column is needed", cfg.Name)
	}
	maxIndex := 0
	for i, c := range q.Columns {
		if c.Index < 1 || c.Channel == "" {
			return nil, fmt.Errorf("logger %q: query.columns[%d]: want a 1-based index and a channel", cfg.Name, i)
		}
		maxIndex = max(maxIndex, c.Index)
	}
	var err error
	if p.slot, p.channels, err = slotColumns(q.Columns, maxIndex); err != nil {
		return nil, fmt.Errorf("logger %q: query.%w", cfg.Name, err)
	}
	conv, err := newConversion(cfg, p.channels)
	if err != nil {
		return nil, err
	}
	p.conv = conv
	return p, nil
}

// Parse returns one Reading per column for a reply (terminator removed) received at
// the given time. A reply with fewer values than the columns need is an error wrapping
// ErrShortLine; a value that is not a number is kept as StatusUnparsable (or
// StatusOpen for a marker word).
func (p *ReplyParser) Parse(reply []byte, received time.Time) ([]Reading, error) {
	dst, err := p.AppendParse(nil, reply, received)
	if err != nil {
		return nil, err
	}
	return dst, nil
}

// AppendParse is Parse appending to dst.
func (p *ReplyParser) AppendParse(dst []Reading, reply []byte, received time.Time) ([]Reading, error) {
	start := len(dst)
	for _, ch := range p.channels {
		dst = append(dst, Reading{Logger: p.logger, Channel: ch, Time: received})
	}
	rest := bytes.TrimSpace(reply)
	for i := range p.slot {
		if rest == nil {
			return dst[:start], fmt.Errorf("logger %q: %w: reply has %d values, need %d", p.logger, ErrShortLine, i, len(p.slot))
		}
		var val []byte
		if j := bytes.Index(rest, p.sep); j >= 0 {
			val, rest = bytes.TrimSpace(rest[:j]), rest[j+len(p.sep):]
		} else {
			val, rest = bytes.TrimSpace(rest), nil
		}
		s := p.slot[i]
		if s < 0 {
			continue
		}
		if v, ok := parseNumber(val); ok {
			p.conv.setRaw(&dst[start+s], v, val)
		} else {
			p.conv.setUnreadable(&dst[start+s], val)
		}
	}
	p.conv.apply(dst[start:])
	return dst, nil
}

// QuerySource asks an instrument for its readings (config format "query", SCPI style):
// every interval it discards any unread input (a late reply to an earlier query),
// sends the command and reads one reply up to the terminator within the timeout. A
// late or garbled reply is counted, the input drained and flushed, and the next query
// starts clean; the port stays open. After a timeout it waits up to one more timeout
// for the late reply and discards it; a reply later than that could still be taken for
// the next one (SCPI replies carry no request id), so set the timeout above the
// instrument's slowest answer. It implements Source and StatsReporter.
type QuerySource struct {
	name    string
	cmd     []byte
	term    []byte
	timeout time.Duration
	parser  *ReplyParser
	port    pollPort
	status  *portStatus
}

var (
	_ Source        = (*QuerySource)(nil)
	_ StatsReporter = (*QuerySource)(nil)
)

// NewQuerySource checks cfg and returns a source for it; nothing is opened until Run.
// A nil log discards log output.
func NewQuerySource(cfg Logger, log *slog.Logger) (*QuerySource, error) {
	baud, err := checkPort(cfg.Name, cfg.Port, cfg.Baud)
	if err != nil {
		return nil, err
	}
	q := cfg.Query
	if strings.TrimSpace(q.Command) == "" {
		return nil, fmt.Errorf("logger %q: query.command: must not be empty", cfg.Name)
	}
	parser, err := NewReplyParser(cfg)
	if err != nil {
		return nil, err
	}
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	term := cmp.Or(q.Terminator, DefaultTerminator)
	cmd := q.Command
	if !strings.HasSuffix(cmd, term) {
		cmd += term
	}
	interval := orDefault(q.Interval, DefaultPollInterval)
	s := &QuerySource{
		name: cfg.Name, cmd: []byte(cmd), term: []byte(term), parser: parser,
		timeout: min(orDefault(q.Timeout, DefaultQueryTimeout), interval),
		status:  &portStatus{s: PortStats{Logger: cfg.Name, Port: cfg.Port}},
	}
	s.port = pollPort{path: cfg.Port, mode: serial.Mode{BaudRate: baud}, interval: interval,
		open: openSerial, status: s.status, log: log}
	return s, nil
}

// Name returns the logger name.
func (s *QuerySource) Name() string { return s.name }

// Stats returns a snapshot of the port counters; it is safe for concurrent use. A
// reply that times out counts as a read error, a garbled one as a parse error.
func (s *QuerySource) Stats() PortStats { return s.status.snapshot() }

// Run queries until ctx ends, sending one Reading per column of each good reply. It
// returns ctx.Err().
func (s *QuerySource) Run(ctx context.Context, out chan<- Reading) error {
	var buf, readings []Reading
	reply := make([]byte, 0, 256)
	return s.port.Run(ctx, func(ctx context.Context, port serial.Port) error {
		var err error
		reply, err = s.ask(port, reply[:0])
		if err != nil {
			return err
		}
		now := time.Now()
		readings, err = s.parser.AppendParse(buf[:0], reply, now)
		if err != nil {
			s.status.parseErrors(1)
			drain(port, 0, s.timeout)
			return fmt.Errorf("%w: %w (reply %q)", errTransient, err, truncate(reply, 80))
		}
		s.status.lastReading(now)
		for _, r := range readings {
			select {
			case out <- r:
			case <-ctx.Done():
				return nil
			}
		}
		return nil
	})
}

// ask sends the command and reads one reply into reply, without the terminator and a
// trailing '\r'.
func (s *QuerySource) ask(port serial.Port, reply []byte) ([]byte, error) {
	if err := port.ResetInputBuffer(); err != nil {
		return reply, fmt.Errorf("flush %s: %w", s.port.path, err)
	}
	if _, err := port.Write(s.cmd); err != nil {
		return reply, fmt.Errorf("write query to %s: %w", s.port.path, err)
	}
	deadline := time.Now().Add(s.timeout)
	var chunk [256]byte
	for {
		if i := bytes.Index(reply, s.term); i >= 0 {
			return bytes.TrimSuffix(reply[:i], []byte("\r")), nil
		}
		left := time.Until(deadline)
		if left <= 0 || len(reply) > MaxLineBytes {
			s.status.readError()
			drain(port, s.timeout, 2*s.timeout) // wait out the late reply, if any
			return reply, fmt.Errorf("%w: %w after %s (%d bytes)", errTransient, ErrReplyTimeout, s.timeout, len(reply))
		}
		if err := port.SetReadTimeout(left); err != nil {
			return reply, fmt.Errorf("set read timeout on %s: %w", s.port.path, err)
		}
		n, err := port.Read(chunk[:])
		if err != nil {
			return reply, fmt.Errorf("read reply from %s: %w", s.port.path, err)
		}
		reply = append(reply, chunk[:n]...)
	}
}

// drainQuiet is how long the line must stay silent before a flush after a bad reply
// is believed to have caught its tail.
const drainQuiet = 20 * time.Millisecond

// drain reads and discards input until the line is quiet, then flushes the input
// buffer. It waits up to firstWait for a first byte (the start of a late reply), then
// until no byte comes for drainQuiet, all within limit.
func drain(port serial.Port, firstWait, limit time.Duration) {
	end := time.Now().Add(limit)
	wait := max(firstWait, drainQuiet)
	var scratch [256]byte
	for time.Now().Before(end) {
		if port.SetReadTimeout(min(wait, time.Until(end))) != nil {
			break
		}
		wait = drainQuiet
		n, err := port.Read(scratch[:])
		if err != nil || n == 0 {
			break
		}
	}
	_ = port.ResetInputBuffer()
}
