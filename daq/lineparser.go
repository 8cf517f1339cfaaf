package daq

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"
	"time"
)

// ErrShortLine reports a line with fewer fields than the configured columns need.
var ErrShortLine = errors.New("daq: line has too few fields")

// ErrBadClock reports a clock field that is not a finite number of seconds or does not
// fit the configured clock format.
var ErrBadClock = errors.New("daq: unreadable logger clock")

// ErrNoMatch reports a line that does not match the configured regular expression.
var ErrNoMatch = errors.New("daq: line does not match the regexp")

// The kinds of logger clock.
const (
	clockSeconds = iota // seconds since any start: anchored to the host clock
	clockUnix           // seconds since 1970 UTC
	clockLayout         // a time layout
)

// LineParser turns one text line of a logger into Readings, one per configured column.
//
// Fields are cut by the separator or are the capture groups of the regular expression;
// either way indexes are 1-based, as in a spreadsheet. With decimal_comma a field
// "21,5" reads 21.5.
//
// When the format has a clock column in seconds (the default clock_format), a
// reading's time is anchor + clock seconds: the anchor is set from the first line
// (receive time − clock) and set again whenever the logger clock jumps backwards (the
// logger restarted). A "unix" clock and a time layout give the time directly. Without
// a clock column the receive time is used.
//
// A parser made by NewLineParserFor also converts units (°F, K, thermocouple mV) and
// recognises open-circuit markers and rails, as the logger's inputs and open sections
// say.
//
// A LineParser keeps the clock anchor, so it is not safe for concurrent use.
type LineParser struct {
	logger   string
	sep      []byte
	re       *regexp.Regexp // replaces sep when set
	comma    bool           // decimal comma
	clock    int            // 1-based clock field, 0 for none
	clockFmt int            // clockSeconds, clockUnix or clockLayout
	layout   string         // Go layout of the clock field
	format   string         // clock_format as configured, for messages
	maxField int            // highest 1-based field that must be present
	slot     []int          // slot[i] is the column position of 1-based field i+1, or -1
	channels []string
	conv     *conversion

	anchored  bool
	anchor    time.Time
	lastClock float64
}

// NewLineParser checks the format f of the named logger and returns its parser, which
// reads every channel in °C. Errors name the logger and the offending key.
func NewLineParser(logger string, f LineFormat) (*LineParser, error) {
	return NewLineParserFor(Logger{Name: logger, Line: f})
}

// NewLineParserFor returns the parser of cfg.Line with cfg's inputs (units,
// thermocouples) and open-circuit markers. Errors name the logger and the key.
func NewLineParserFor(cfg Logger) (*LineParser, error) {
	logger, f := cfg.Name, cfg.Line
	sep := f.Separator
	if sep == "" {
		sep = DefaultSeparator
	}
	if f.ClockColumn < 0 {
		return nil, fmt.Errorf("logger %q: line.clock_column %d: must be 0 (host time) or a 1-based field index", logger, f.ClockColumn)
	}
	p := &LineParser{logger: logger, sep: []byte(sep), comma: f.DecimalComma, clock: f.ClockColumn}
	if err := p.setSplit(&f); err != nil {
		return nil, fmt.Errorf("logger %q: %w", logger, err)
	}
	if err := p.setClock(f.ClockFormat); err != nil {
		return nil, fmt.Errorf("logger %q: %w", logger, err)
	}
	if len(f.Columns) == 0 {
		return nil, fmt.Errorf("logger %q: line.columns: at least one column is needed", logger)
	}
	p.maxField = p.clock
	for i, c := range f.Columns {
		if err := checkColumn(f, i, c); err != nil {
			return nil, fmt.Errorf("logger %q: line.columns[%d]: %w", logger, i, err)
		}
		p.maxField = max(p.maxField, c.Index)
	}
	if p.re != nil && p.maxField > p.re.NumSubexp() {
		return nil, fmt.Errorf("logger %q: line.columns: field %d: the regexp has %d groups", logger, p.maxField, p.re.NumSubexp())
	}
	var err error
	if p.slot, p.channels, err = slotColumns(f.Columns, p.maxField); err != nil {
		return nil, fmt.Errorf("logger %q: line.%w", logger, err)
	}
	conv, err := newConversion(cfg, p.channels)
	if err != nil {
		return nil, err
	}
	p.conv = conv
	return p, nil
}

// setSplit compiles the regexp, if any, and turns its named groups into columns (a
// group "clock" into the clock column) appended to f.Columns.
func (p *LineParser) setSplit(f *LineFormat) error {
	if f.Regexp == "" {
		if f.DecimalComma && string(p.sep) == "," {
			return errors.New(`line.decimal_comma: needs a separator other than ","`)
		}
		return nil
	}
	re, err := regexp.Compile(f.Regexp)
	if err != nil {
		return fmt.Errorf("line.regexp: %w", err)
	}
	p.re = re
	cols := append([]Column(nil), f.Columns...)
	for i, name := range re.SubexpNames() {
		switch {
		case name == "":
		case name == "clock":
			if p.clock != 0 && p.clock != i {
				return fmt.Errorf("line.clock_column %d: the regexp group \"clock\" is group %d", p.clock, i)
			}
			p.clock, f.ClockColumn = i, i
		default:
			cols = append(cols, Column{Index: i, Channel: name})
		}
	}
	f.Columns = cols
	return nil
}

// setClock reads the clock format.
func (p *LineParser) setClock(format string) error {
	layout, err := ClockFormatLayout(format)
	switch {
	case err != nil:
		return fmt.Errorf("line.clock_format %q: %w", format, err)
	case layout != "":
		p.clockFmt, p.layout, p.format = clockLayout, layout, format
	case strings.EqualFold(format, "unix"):
		p.clockFmt = clockUnix
	}
	return nil
}

func checkColumn(f LineFormat, i int, c Column) error {
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
	if p.re != nil {
		return p.appendMatch(dst, start, line, received)
	}
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
			p.setValue(&dst[start+s], val)
		}
	}
	return p.finish(dst, start, clockField, received)
}

// appendMatch is AppendParse for a regexp format.
func (p *LineParser) appendMatch(dst []Reading, start int, line []byte, received time.Time) ([]Reading, error) {
	idx := p.re.FindSubmatchIndex(line)
	if idx == nil {
		return dst[:start], fmt.Errorf("logger %q: %w", p.logger, ErrNoMatch)
	}
	var clockField []byte
	for field := 1; field <= p.maxField; field++ {
		var val []byte
		if a, b := idx[2*field], idx[2*field+1]; a >= 0 {
			val = bytes.TrimSpace(line[a:b])
		}
		if field == p.clock {
			clockField = val
		} else if s := p.slot[field-1]; s >= 0 {
			p.setValue(&dst[start+s], val)
		}
	}
	return p.finish(dst, start, clockField, received)
}

// finish sets the time and converts units of the readings dst[start:].
func (p *LineParser) finish(dst []Reading, start int, clockField []byte, received time.Time) ([]Reading, error) {
	t, err := p.timeOf(clockField, received)
	if err != nil {
		return dst[:start], err
	}
	for i := start; i < len(dst); i++ {
		dst[i].Time = t
	}
	p.conv.apply(dst[start:])
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

func (p *LineParser) setValue(r *Reading, val []byte) {
	v, ok := parseNumberComma(val, p.comma)
	if !ok {
		p.conv.setUnreadable(r, val)
		return
	}
	p.conv.setRaw(r, v, val)
}

// parseNumberComma is parseNumber that, with comma, reads a decimal comma.
func parseNumberComma(b []byte, comma bool) (float64, bool) {
	if !comma || bytes.IndexByte(b, ',') < 0 {
		return parseNumber(b)
	}
	var buf [64]byte
	if len(b) > len(buf) {
		return 0, false
	}
	n := copy(buf[:], b)
	for i := range n {
		if buf[i] == ',' {
			buf[i] = '.'
		}
	}
	return parseNumber(buf[:n])
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
	switch {
	case p.clock == 0:
		return received, nil
	case p.clockFmt == clockLayout:
		text := string(clockField)
		if strings.Contains(p.layout, "PM") {
			// Go reads AM/PM in capitals only; loggers also write am/pm. Month and
			// weekday names are read in any case, so the whole field can be raised.
			text = strings.ToUpper(text)
		}
		t, err := time.ParseInLocation(p.layout, text, time.Local)
		if err != nil {
			return time.Time{}, fmt.Errorf("logger %q: %w: field %d is %q, want clock_format %q", p.logger, ErrBadClock, p.clock, clockField, p.format)
		}
		return t, nil
	}
	secs, ok := parseNumber(clockField)
	if !ok || math.Abs(secs) > maxClockSeconds {
		return time.Time{}, fmt.Errorf("logger %q: %w: field %d is %q", p.logger, ErrBadClock, p.clock, clockField)
	}
	offset := time.Duration(math.Round(secs * 1e9))
	if p.clockFmt == clockUnix {
		return time.Unix(0, 0).Add(offset), nil
	}
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

// slotColumns maps 1-based field indexes (up to maxField) to their column's position
// (-1 for fields no column reads) and lists the columns' channels in order. The line
// and query parsers share it.
func slotColumns(cols []Column, maxField int) (slot []int, channels []string, err error) {
	slot = make([]int, maxField)
	for i := range slot {
		slot[i] = -1
	}
	for i, c := range cols {
		if slot[c.Index-1] >= 0 {
			return nil, nil, fmt.Errorf("columns[%d]: index %d is used twice", i, c.Index)
		}
		slot[c.Index-1] = i
		channels = append(channels, c.Channel)
	}
	return slot, channels, nil
}
