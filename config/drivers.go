package config

import (
	"maps"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/clean"
)

// checkLogger checks one logger at key (e.g. "loggers[0]"): the driver's settings
// (daq.Logger.Check, each driver its own section) and the clean section. Every channel
// the logger reads must be one of channels (name → index) and read by no other
// logger; readBy holds the key of the column that read each channel so far.
func checkLogger(k *checker, key string, l Logger, channels map[string]int, readBy map[string]string) {
	lc := &loggerChecker{checker: k, channels: channels, readBy: readBy}
	if !l.Logger.Check(lc, key) {
		return
	}
	l.Clean.Check(lc, key+".clean")
}

// loggerChecker collects the problems of a logger's checks as configuration problems
// and ties the channels it reads to the configuration's channels.
type loggerChecker struct {
	*checker
	channels map[string]int
	readBy   map[string]string
}

// Add reports a problem at key.
func (lc *loggerChecker) Add(key, format string, args ...any) { lc.add(key, format, args...) }

// Reads checks that name, given at key, is a configured channel read by no other
// column or register.
func (lc *loggerChecker) Reads(key, name string) {
	if name == "" {
		lc.add(key, "must not be empty")
		return
	}
	if _, ok := lc.channels[name]; !ok {
		lc.add(key, "no channel named %q in channels", name)
		return
	}
	if other, dup := lc.readBy[name]; dup {
		lc.add(key, "channel %q is already read by %s", name, other)
		return
	}
	lc.readBy[name] = key
}

// CleanOptions returns each logger's clean section by logger name, for clean.New.
func (c *Config) CleanOptions() map[string]clean.Options {
	out := map[string]clean.Options{}
	for _, l := range c.Loggers {
		out[l.Name] = l.Clean
	}
	return out
}

// ClockOptions returns the clock check's settings: the defaults, and which loggers
// send a calendar clock.
func (c *Config) ClockOptions() clean.ClockOptions {
	calendar := map[string]bool{}
	for _, l := range c.Loggers {
		calendar[l.Name] = l.Line.CalendarClock()
	}
	return clean.ClockOptions{Calendar: calendar}
}

// withLoggerDefaults returns a copy of one raw loggers[] item with baud, format and
// the drivers' section defaults (daq.SectionDefaults) added where absent. A section
// that is absent gets its defaults as a new mapping; one that is not a mapping is
// left for the decoder to refuse.
func withLoggerDefaults(item any) any {
	m, ok := item.(map[string]any)
	if !ok {
		return item
	}
	out := maps.Clone(m)
	setIfAbsent(out, "baud", daq.DefaultBaud)
	setIfAbsent(out, "format", daq.DefaultFormat)
	for section, defaults := range daq.SectionDefaults() {
		switch s := out[section].(type) {
		case nil:
			out[section] = maps.Clone(defaults)
		case map[string]any:
			filled := maps.Clone(s)
			for key, val := range defaults {
				setIfAbsent(filled, key, val)
			}
			out[section] = filled
		}
	}
	return out
}
