package daq

import (
	"fmt"
	"strings"
	"time"

	"github.com/settle-lab/settle/daq/thermocouple"
)

// Logger is one data logger on one serial port: the settings every driver shares and,
// one field a format, each driver's own section. config embeds it in its loggers[]
// entries, so its keys are those of the configuration file.
type Logger struct {
	// Name identifies the logger in logs and metric labels.
	Name string `mapstructure:"name"`
	// Port is the serial device path, preferably a stable /dev/serial/by-id/… link.
	Port string `mapstructure:"port"`
	// Baud is the line speed (default 9600).
	Baud int `mapstructure:"baud"`
	// Format selects the driver: "line" (text lines the logger sends by itself),
	// "query" (SCPI-style: settle asks, the instrument answers) or "modbus" (Modbus
	// RTU, functions 03 and 04).
	Format string `mapstructure:"format"`

	// The drivers' own sections, one a registered format, tagged with its name (a
	// new driver adds one line here and registers itself in its own file).

	// Line configures the line driver.
	Line LineFormat `mapstructure:"line"`
	// Query configures the query driver.
	Query QueryFormat `mapstructure:"query"`
	// Modbus configures the Modbus RTU driver.
	Modbus ModbusFormat `mapstructure:"modbus"`

	// Inputs say what unit each channel of this logger arrives in (default °C) and,
	// for millivolts, the thermocouple type and cold junction. Shared by all formats.
	Inputs []Input `mapstructure:"inputs"`
	// Open says how the logger reports an open thermocouple; shared by all formats.
	Open OpenCircuit `mapstructure:"open"`
}

// Defaults of the settings every driver shares.
const (
	// DefaultBaud is the line speed of a logger without baud: 9600 baud is the usual
	// factory setting of serial instruments (common practice).
	DefaultBaud = 9600
	// DefaultFormat is the driver of a logger without format.
	DefaultFormat = "line"
	// DefaultPollInterval is the time between queries or polls of the drivers that ask
	// before they read (query, modbus).
	DefaultPollInterval = time.Second
)

// Column maps one field of a line, or one value of a reply, to a channel.
type Column struct {
	// Index is the 1-based field index, counted as in a spreadsheet.
	Index int `mapstructure:"index"`
	// Channel is the name of the channel (one of `channels[].name`).
	Channel string `mapstructure:"channel"`
}

// Input says what one channel of a logger measures in.
type Input struct {
	// Channel is the name of the channel (read by this logger).
	Channel string `mapstructure:"channel"`
	// Unit is "C" (default), "F", "K" or "mV" (thermocouple EMF).
	Unit string `mapstructure:"unit"`
	// Thermocouple is the type letter (B, E, J, K, N, R, S, T) for unit mV.
	Thermocouple string `mapstructure:"thermocouple"`
	// ColdJunction names a channel of the same logger that measures the cold
	// junction (reference) temperature, for unit mV.
	ColdJunction string `mapstructure:"cold_junction"`
	// ColdJunctionCelsius is a fixed cold-junction temperature, for unit mV when no
	// ColdJunction channel is given (absent: 0 °C, an ice bath).
	ColdJunctionCelsius *float64 `mapstructure:"cold_junction_celsius"`
}

// OpenCircuit says how a logger reports an open thermocouple. Values are compared as
// the logger sends them (after a Modbus register's scale and offset, before any unit
// conversion).
type OpenCircuit struct {
	// Markers are words sent instead of a number, e.g. "OPEN" or "----" (compared
	// without regard to case).
	Markers []string `mapstructure:"markers"`
	// AtOrAbove marks a value at or above it as open (an upper rail, e.g. 9999).
	AtOrAbove *float64 `mapstructure:"at_or_above"`
	// AtOrBelow marks a value at or below it as open (a lower rail).
	AtOrBelow *float64 `mapstructure:"at_or_below"`
}

// Units are the units a channel's values may arrive in (Input.Unit).
var Units = []string{"C", "F", "K", "mV"}

// checkInputs checks the unit of each channel; own holds the channels this logger reads.
func checkInputs(c Checker, key string, inputs []Input, own map[string]bool) {
	seen := map[string]int{}
	for i, in := range inputs {
		iKey := fmt.Sprintf("%s[%d]", key, i)
		if first, dup := seen[in.Channel]; dup {
			c.Add(iKey+".channel", "channel %q already has an input at %s[%d]", in.Channel, key, first)
		} else if !own[in.Channel] {
			c.Add(iKey+".channel", "channel %q is not read by this logger", in.Channel)
		}
		seen[in.Channel] = i
		in.check(c, iKey, own)
	}
}

func (in Input) check(c Checker, key string, own map[string]bool) {
	switch in.Unit {
	case "", "C", "F", "K":
		if in.Thermocouple != "" || in.ColdJunction != "" || in.ColdJunctionCelsius != nil {
			c.Add(key+".unit", "thermocouple and cold junction need unit mV, got %q", in.Unit)
		}
		return
	case "mV":
	default:
		c.Add(key+".unit", "want one of %s, got %q", strings.Join(Units, ", "), in.Unit)
		return
	}
	if _, err := thermocouple.ParseType(in.Thermocouple); err != nil {
		c.Add(key+".thermocouple", "unit mV needs a thermocouple type (B, E, J, K, N, R, S, T), got %q", in.Thermocouple)
	}
	switch {
	case in.ColdJunction != "" && in.ColdJunctionCelsius != nil:
		c.Add(key, "give cold_junction (a channel) or cold_junction_celsius (a fixed value), not both")
	case in.ColdJunction == in.Channel && in.ColdJunction != "":
		c.Add(key+".cold_junction", "channel %q cannot be its own cold junction", in.Channel)
	case in.ColdJunction != "" && !own[in.ColdJunction]:
		c.Add(key+".cold_junction", "channel %q is not read by this logger", in.ColdJunction)
	case in.ColdJunctionCelsius != nil && !(*in.ColdJunctionCelsius >= -50 && *in.ColdJunctionCelsius <= 150):
		c.Add(key+".cold_junction_celsius", "must be between -50 and 150 °C, got %g", *in.ColdJunctionCelsius)
	}
}

func (o OpenCircuit) check(c Checker, key string) {
	for i, m := range o.Markers {
		if strings.TrimSpace(m) == "" {
			c.Add(fmt.Sprintf("%s.markers[%d]", key, i), "must not be blank")
		}
	}
	if o.AtOrAbove != nil && o.AtOrBelow != nil && *o.AtOrBelow >= *o.AtOrAbove {
		c.Add(key, "at_or_below (%g) must be less than at_or_above (%g)", *o.AtOrBelow, *o.AtOrAbove)
	}
}

// checkPoll checks a poll interval and timeout (zero: default) of a section at key.
func checkPoll(c Checker, key string, interval, timeout time.Duration) {
	if interval < 0 {
		c.Add(key+".interval", "must not be negative (0 or absent: %s), got %s", DefaultPollInterval, interval)
	}
	if timeout < 0 {
		c.Add(key+".timeout", "must not be negative, got %s", timeout)
	}
	if interval > 0 && timeout > interval {
		c.Add(key+".timeout", "%s is longer than the interval %s", timeout, interval)
	}
}
