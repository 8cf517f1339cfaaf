package daq

import (
	"cmp"
	"fmt"
	"log/slog"
	"strings"
	"time"
)

// The query driver's settings: its section of a logger ("query"), their defaults and
// their checks.

func init() {
	Register("query", Driver{
		New:     func(l Logger, log *slog.Logger) (Source, error) { return NewQuerySource(l, log) },
		Section: func(l Logger) Section { return l.Query },
	})
}

// Defaults of the query section, used where a key is absent (zero).
const (
	// DefaultQueryTimeout bounds the wait for one query reply.
	DefaultQueryTimeout = time.Second
	// DefaultTerminator ends a query reply.
	DefaultTerminator = "\n"
)

// QueryFormat describes an instrument that answers a query (SCPI style).
type QueryFormat struct {
	// Command is sent every Interval, e.g. "MEAS:TEMP? (@101:104)\n" (in YAML, write
	// it in double quotes so that \n is a newline). A missing Terminator is added.
	Command string `mapstructure:"command"`
	// Interval is the time between queries (default 1s).
	Interval time.Duration `mapstructure:"interval"`
	// Timeout bounds the wait for one reply (default 1s, at most Interval).
	Timeout time.Duration `mapstructure:"timeout"`
	// Terminator ends a reply (default "\n"; a trailing "\r" is dropped).
	Terminator string `mapstructure:"terminator"`
	// Separator splits a reply into values (default ",").
	Separator string `mapstructure:"separator"`
	// Columns map 1-based value positions in the reply to channels.
	Columns []Column `mapstructure:"columns"`
}

// Channels lists the channels of the columns, in order.
func (q QueryFormat) Channels() []string { return columnChannels(q.Columns) }

// Check reports what is wrong with the query section at key, and every channel its
// columns read.
func (q QueryFormat) Check(c Checker, key string) {
	if strings.TrimSpace(q.Command) == "" {
		c.Add(key+".command", `must not be empty; e.g. "MEAS:TEMP? (@101:104)\n"`)
	}
	checkPoll(c, key, q.Interval, q.Timeout)
	sep, term := cmp.Or(q.Separator, ","), cmp.Or(q.Terminator, DefaultTerminator)
	if strings.Contains(term, sep) {
		c.Add(key+".separator", "%q is part of the terminator %q", sep, term)
	}
	if len(q.Columns) == 0 {
		c.Add(key+".columns", "at least one column is needed")
	}
	seen := map[int]int{}
	for i, col := range q.Columns {
		colKey := fmt.Sprintf("%s.columns[%d]", key, i)
		if first, dup := seen[col.Index]; col.Index < 1 {
			c.Add(colKey+".index", "must be ≥ 1 (values count from 1), got %d", col.Index)
		} else if dup {
			c.Add(colKey+".index", "value %d is already mapped by %s.columns[%d]", col.Index, key, first)
		} else {
			seen[col.Index] = i
		}
		c.Reads(colKey+".channel", col.Channel)
	}
}
