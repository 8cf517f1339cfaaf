package daq

import (
	"fmt"
	"log/slog"
	"regexp"
)

// The line driver's settings: its section of a logger ("line"), their default and
// their checks.

func init() {
	Register("line", Driver{
		New:      func(l Logger, log *slog.Logger) (Source, error) { return NewLineSource(l, log) },
		Section:  func(l Logger) Section { return l.Line },
		Defaults: map[string]any{"separator": DefaultSeparator},
	})
}

// DefaultSeparator splits the fields of a text line when line.separator is absent.
const DefaultSeparator = ","

// LineFormat describes a text line: fields cut by a separator, or the capture groups
// of a regular expression.
type LineFormat struct {
	// Separator splits a line into fields (default ",").
	Separator string `mapstructure:"separator"`
	// Regexp, when set, replaces Separator: the line must match it and capture group
	// n is field n. A named group "clock" is the clock field, and a group named after
	// a channel (Go group names allow letters, digits and '_') reads that channel.
	Regexp string `mapstructure:"regexp"`
	// DecimalComma reads "21,5" as 21.5 (the separator must then not be ",").
	DecimalComma bool `mapstructure:"decimal_comma"`
	// ClockColumn is the 1-based field holding the logger's clock; 0 means the host's
	// receive time is used.
	ClockColumn int `mapstructure:"clock_column"`
	// ClockFormat is how the clock field is written: "seconds" (default: seconds
	// since any start), "unix" (seconds since 1970 UTC), "rfc3339", or a Go time
	// layout such as "2006-01-02 15:04:05" (read in the host's local zone unless the
	// layout has a zone).
	ClockFormat string `mapstructure:"clock_format"`
	// Columns map 1-based field indexes to channel names.
	Columns []Column `mapstructure:"columns"`
}

// CalendarClock reports whether readings carry the logger's calendar clock (unix,
// rfc3339 or a layout) rather than the host's time or seconds since any start.
func (f LineFormat) CalendarClock() bool {
	return f.ClockColumn != 0 && f.ClockFormat != "" && f.ClockFormat != "seconds"
}

// columnChannels lists the channels of columns, in order.
func columnChannels(cols []Column) []string {
	out := make([]string, 0, len(cols))
	for _, col := range cols {
		out = append(out, col.Channel)
	}
	return out
}

// Channels lists the channels of the columns, in order (not those of named regexp
// groups).
func (f LineFormat) Channels() []string { return columnChannels(f.Columns) }

// Check reports what is wrong with the line section at key, and every channel its
// columns and named regexp groups read.
func (f LineFormat) Check(c Checker, key string) {
	fields := f.checkSplit(c, key)
	if f.ClockColumn < 0 {
		c.Add(key+".clock_column", "must be ≥ 0 (0: use the host's receive time), got %d", f.ClockColumn)
	}
	if _, err := ClockFormatLayout(f.ClockFormat); err != nil {
		c.Add(key+".clock_format", "%q: %v", f.ClockFormat, err)
	}
	if len(f.Columns) == 0 && len(fields.named) == 0 {
		c.Add(key+".columns", "at least one column is needed")
	}
	indexes := map[int]int{}
	for i, col := range f.Columns {
		colKey := fmt.Sprintf("%s.columns[%d]", key, i)
		switch first, dup := indexes[col.Index]; {
		case col.Index < 1:
			c.Add(colKey+".index", "must be ≥ 1 (fields count from 1), got %d", col.Index)
		case col.Index == f.ClockColumn:
			c.Add(colKey+".index", "field %d is the clock_column", col.Index)
		case dup:
			c.Add(colKey+".index", "field %d is already mapped by %s.columns[%d]", col.Index, key, first)
		case fields.namedIndex[col.Index] != "":
			c.Add(colKey+".index", "field %d is the regexp group %q", col.Index, fields.namedIndex[col.Index])
		case fields.groups > 0 && col.Index > fields.groups:
			c.Add(colKey+".index", "field %d: the regexp has only %d groups", col.Index, fields.groups)
		default:
			indexes[col.Index] = i
		}
		c.Reads(colKey+".channel", col.Channel)
	}
	for _, name := range fields.named {
		c.Reads(key+".regexp", name)
	}
}

// lineFields describes the fields a line format yields.
type lineFields struct {
	groups     int            // capture groups of the regexp (0 without one)
	named      []string       // channel names given by named groups
	namedIndex map[int]string // group index → name, for named groups
}

// checkSplit checks separator, regexp and decimal_comma.
func (f LineFormat) checkSplit(c Checker, key string) lineFields {
	if f.Regexp == "" {
		if f.Separator == "" {
			c.Add(key+".separator", "must not be empty")
		}
		if f.DecimalComma && f.Separator == "," {
			c.Add(key+".decimal_comma", `needs a separator other than ","; set separator (e.g. ";")`)
		}
		return lineFields{}
	}
	re, err := regexp.Compile(f.Regexp)
	if err != nil {
		c.Add(key+".regexp", "%v", err)
		return lineFields{}
	}
	fields := lineFields{groups: re.NumSubexp(), namedIndex: map[int]string{}}
	if fields.groups == 0 {
		c.Add(key+".regexp", "has no capture groups; each (…) group is a field")
	}
	for i, name := range re.SubexpNames() {
		if name == "" {
			continue
		}
		fields.namedIndex[i] = name
		if name == "clock" {
			if f.ClockColumn != 0 && f.ClockColumn != i {
				c.Add(key+".clock_column", "is %d but the regexp group \"clock\" is group %d", f.ClockColumn, i)
			}
			continue
		}
		fields.named = append(fields.named, name)
	}
	return fields
}
