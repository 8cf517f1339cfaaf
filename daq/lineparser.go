package daq

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"strconv"
	"time"

	"github.com/settle-lab/settle/config"
)

// DefaultSeparator is the field separator used when config.LineFormat.Separator is empty.
const DefaultSeparator = ","

// ErrShortLine reports a line with fewer fields than the configured columns need.
var ErrShortLine = errors.New("daq: line has too few fields")

// ErrBadClock reports a clock field that is not a finite number of seconds.
var ErrBadClock = errors.New("daq: unreadable logger clock")

// LineParser turns one text line of a logger into Readings, one per configured column.
//
// Field indexes are 1-based, as in a spreadsheet. When the format has a clock column, a
// reading's time is anchor + clock seconds: the anchor is set from the first line
// (receive time − clock) and set again whenever the logger clock jumps backwards (the
// logger restarted). Without a clock column the receive time is used.
//
// A LineParser keeps the clock anchor, so it is not safe for concurrent use.
type LineParser struct {
	logger   string
	sep      []byte
	clock    int   // 1-based clock field, 0 for none
	maxField int   // highest 1-based field that must be present
	slot     []int // slot[i] is the column position of 1-based field i+1, or -1
	channels []string

	anchored  bool
	anchor    time.Time
	lastClock float64
}

// NewLineParser checks the format f of the named logger and returns its parser. Errors
// name the logger and the offending key.
func NewLineParser(logger string, f config.LineFormat) (*LineParser, error) {
	sep := f.Separator
	if sep == "" {
		sep = DefaultSeparator
	}
	if f.ClockColumn < 0 {
		return nil, fmt.Errorf("logger %q: line.clock_column %d: must be 0 (host time) or a 1-based field index", logger, f.ClockColumn)
	}
	if len(f.Columns) == 0 {
		return nil, fmt.Errorf("logger %q: line.columns: at least one column is needed", logger)
	}
	p := &LineParser{logger: logger, sep: []byte(sep), clock: f.ClockColumn, maxField: f.ClockColumn}
	for i, c := range f.Columns {
		if err := checkColumn(f, i, c); err != nil {
			return nil, fmt.Errorf("logger %q: line.columns[%d]: %w", logger, i, err)
		}
		p.maxField = max(p.maxField, c.Index)
	}
	p.slot = make([]int, p.maxField)
	for i := range p.slot {
		p.slot[i] = -1
	}
	for i, c := range f.Columns {
		if p.slot[c.Index-1] >= 0 {
			return nil, fmt.Errorf("logger %q: line.columns[%d]: index %d is used twice", logger, i, c.Index)
		}
		p.slot[c.Index-1] = i
		p.channels = append(p.channels, c.Channel)
	}
	return p, nil
}

func checkColumn(f config.LineFormat, i int, c config.Column) error {
	switch {
	case c.Index < 1:
		return fmt.Errorf("index %d: must be a 1-based field index", c.Index)
	case c.Index == f.ClockColumn:
		return fmt.Errorf("index %d: is the clock column", c.Index)
	case c.Channel == "":
		return errors.New("channel: must not be empty")
	}
	for _, o := range f.Columns[:i] {
		if o.Channel == c.Channel {
			return fmt.Errorf("channel %q: appears twice", c.Channel)
		}
	}
	return nil
}

// Channels returns the channel names in column order (the order of Parse's readings).
func (p *LineParser) Channels() []string { return append([]string(nil), p.channels...) }

// Parse reads one line received at the given host time. It returns one Reading per
// configured column, in column order; a field that is not a finite number gives a
// Reading with StatusUnparsable and Raw set. Blank lines and lines starting with '#'
// give no readings and no error. A line with too few fields or an unreadable clock is
// an error (wrapping ErrShortLine or ErrBadClock).
func (p *LineParser) Parse(line []byte, received time.Time) ([]Reading, error) {
	dst, err := p.AppendParse(make([]Reading, 0, len(p.channels)), line, received)
	if len(dst) == 0 {
		return nil, err
	}
	return dst, err
}

// AppendParse is Parse appending to dst, so that a caller can reuse one slice.
func (p *LineParser) AppendParse(dst []Reading, line []byte, received time.Time) ([]Reading, error) {
	line = bytes.TrimSpace(line)
	if len(line) == 0 || line[0] == '#' {
		return dst, nil
	}
	start := len(dst)
	dst = p.grow(dst)
	var clockField []byte
	rest := line
	for field := 1; field <= p.maxField; field++ {
		if rest == nil {
			return dst[:start], fmt.Errorf("logger %q: %w: need %d, got %d", p.logger, ErrShortLine, p.maxField, field-1)
		}
		var val []byte
		val, rest = p.cut(rest)
		if field == p.clock {
			clockField = val
			continue
		}
		if s := p.slot[field-1]; s >= 0 {
			setValue(&dst[start+s], val)
		}
	}
	t, err := p.timeOf(clockField, received)
	if err != nil {
		return dst[:start], err
	}
	for i := start; i < len(dst); i++ {
		dst[i].Time = t
	}
	return dst, nil
}

// grow appends one zero-valued Reading per column, with logger and channel set.
func (p *LineParser) grow(dst []Reading) []Reading {
	for _, ch := range p.channels {
		dst = append(dst, Reading{Logger: p.logger, Channel: ch})
	}
	return dst
}

// cut splits off the first field; rest is nil when there are no more fields.
func (p *LineParser) cut(b []byte) (field, rest []byte) {
	i := bytes.Index(b, p.sep)
	if i < 0 {
		return bytes.TrimSpace(b), nil
	}
	return bytes.TrimSpace(b[:i]), b[i+len(p.sep):]
}

func setValue(r *Reading, val []byte) {
	v, ok := parseNumber(val)
	if !ok {
		r.Status = StatusUnparsable
		r.Raw = string(val)
		return
	}
	r.Celsius = v
	r.Status = StatusOK
}

// parseNumber reads a finite decimal number; the conversion of a short field to a string
// does not allocate because strconv does not keep its argument.
func parseNumber(b []byte) (float64, bool) {
	if len(b) == 0 {
		return 0, false
	}
	v, err := strconv.ParseFloat(string(b), 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}

// timeOf returns the reading time for a line with the given clock field.
func (p *LineParser) timeOf(clockField []byte, received time.Time) (time.Time, error) {
	if p.clock == 0 {
		return received, nil
	}
	secs, ok := parseNumber(clockField)
	if !ok || math.Abs(secs) > maxClockSeconds {
		return time.Time{}, fmt.Errorf("logger %q: %w: field %d is %q", p.logger, ErrBadClock, p.clock, clockField)
	}
	offset := time.Duration(math.Round(secs * 1e9))
	if !p.anchored || secs < p.lastClock {
		p.anchor = received.Add(-offset)
		p.anchored = true
	}
	p.lastClock = secs
	return p.anchor.Add(offset), nil
}

// maxClockSeconds bounds the logger clock so that it fits a time.Duration (about 290
// years) with room to spare.
const maxClockSeconds = 1e9 * 3
