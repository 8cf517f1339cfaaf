package daq

import (
	"errors"
	"fmt"
	"log/slog"
	"slices"
	"strings"
)

// Driver is what one logger format brings: its source, and its own section of a
// logger's settings (the key named after the format, e.g. "line") with the section's
// defaults.
type Driver struct {
	// New makes the source of a logger of this format; nothing is opened until Run.
	New func(l Logger, log *slog.Logger) (Source, error)
	// Section returns the driver's section of l (the Logger field tagged with the
	// format's name).
	Section func(l Logger) Section
	// Defaults are keys of the section filled in before decoding where the file leaves
	// them out, so that an explicit zero value stays an error (nil: none).
	Defaults map[string]any
}

// Section is one driver's own section of a logger's settings.
type Section interface {
	// Check reports what is wrong with the section, found at key (e.g.
	// "loggers[0].line"), and every channel it reads.
	Check(c Checker, key string)
	// Channels lists the channels the section's columns or registers read.
	Channels() []string
}

// drivers maps a Logger.Format to its driver. Each driver adds itself with Register
// from its own file; its section is the Logger field tagged with the format's name.
var drivers = map[string]Driver{}

// Register makes a driver available under a format name. It panics if the name is
// taken or d lacks New or Section (a programming error, found at start-up).
func Register(format string, d Driver) {
	if d.New == nil || d.Section == nil {
		panic("daq: Register " + format + ": New and Section are needed")
	}
	if _, dup := drivers[format]; dup {
		panic("daq: Register " + format + ": format already registered")
	}
	drivers[format] = d
}

// Formats returns the registered format names, sorted.
func Formats() []string {
	out := make([]string, 0, len(drivers))
	for f := range drivers {
		out = append(out, f)
	}
	slices.Sort(out)
	return out
}

// SectionDefaults returns the defaults of each format's section that has any, keyed
// by format name (the section's key). The maps are the drivers' own: do not change them.
func SectionDefaults() map[string]map[string]any {
	out := map[string]map[string]any{}
	for f, d := range drivers {
		if len(d.Defaults) > 0 {
			out[f] = d.Defaults
		}
	}
	return out
}

// ErrUnknownFormat reports a logger format no driver is registered for.
var ErrUnknownFormat = errors.New("daq: unknown logger format")

// NewSource returns the driver for l.Format. An unknown format is an error naming the
// logger and the format.
func NewSource(l Logger, log *slog.Logger) (Source, error) {
	d, ok := drivers[l.Format]
	if !ok {
		return nil, fmt.Errorf("logger %q: format %q: %w", l.Name, l.Format, ErrUnknownFormat)
	}
	return d.New(l, log)
}

// Checker receives what the checks of a logger's settings find. Keys are full key
// paths, as the caller gave them (config gives "loggers[0]").
type Checker interface {
	// Add reports a problem at a key path.
	Add(key, format string, args ...any)
	// Reads reports that the settings read the named channel, given at key.
	Reads(key, channel string)
}

// Check checks the settings every driver shares (port, baud, format, inputs, open)
// and the driver's own section, at key (e.g. "loggers[0]"). It reports false for an
// unknown format, whose settings it cannot check further.
func (l Logger) Check(c Checker, key string) bool {
	if strings.TrimSpace(l.Port) == "" {
		c.Add(key+".port", "must not be empty; give the serial device, e.g. a /dev/serial/by-id/… link")
	}
	if l.Baud <= 0 {
		c.Add(key+".baud", "must be positive, got %d", l.Baud)
	}
	d, ok := drivers[l.Format]
	if !ok {
		c.Add(key+".format", "unknown format %q; known: %s", l.Format, strings.Join(Formats(), ", "))
		return false
	}
	own := &ownChannels{Checker: c, own: map[string]bool{}}
	d.Section(l).Check(own, key+"."+l.Format)
	checkInputs(c, key+".inputs", l.Inputs, own.own)
	l.Open.check(c, key+".open")
	return true
}

// Channels lists the channels named by the columns or registers of every driver's
// section that l has (a section of another format than l's own is never read, but a
// channel it names is still tied to l), in the order of Formats.
func (l Logger) Channels() []string {
	var out []string
	for _, f := range Formats() {
		out = append(out, drivers[f].Section(l).Channels()...)
	}
	return out
}

// ownChannels notes the channels a section reads, for the checks of its inputs.
type ownChannels struct {
	Checker
	own map[string]bool
}

func (o *ownChannels) Reads(key, channel string) {
	o.Checker.Reads(key, channel)
	o.own[channel] = true
}
