package config

import (
	"github.com/settle-lab/settle/notify"
)

import "time"

// Config is the whole settle configuration file.
type Config struct {
	// Listen is the HTTP listen address for /metrics, the API and the status page.
	Listen string `mapstructure:"listen"`
	// DataDir holds the journal and other state.
	DataDir string `mapstructure:"data_dir"`
	// Loggers are the data loggers to read.
	Loggers []Logger `mapstructure:"loggers"`
	// Channels describe what each channel measures and its targets.
	Channels []Channel `mapstructure:"channels"`
	// Journal tunes the record of readings (commit interval, retention).
	Journal Journal `mapstructure:"journal"`
	// HTTP secures the HTTP server (token for state-changing requests, TLS).
	HTTP HTTP `mapstructure:"http"`
	// Notify lists where notifications go.
	Notify Notify `mapstructure:"notify"`
	// Display sets how the status page shows values.
	Display Display `mapstructure:"display"`
}

// Journal tunes the SQLite record of readings in data_dir.
type Journal struct {
	// CommitInterval is the longest a reading waits before it is committed; a crash
	// loses at most this much (default 1s).
	CommitInterval time.Duration `mapstructure:"commit_interval"`
	// Retention is the age after which raw readings of finished runs are thinned; 0
	// keeps everything (run summaries are always kept).
	Retention time.Duration `mapstructure:"retention"`
}

// HTTP secures the HTTP server.
type HTTP struct {
	// Token is the bearer token that requests changing state (start or stop a run,
	// annotate) must carry. Empty: such requests are refused. SETTLE_TOKEN overrides it.
	Token string `mapstructure:"token"`
	// TLSCert and TLSKey are PEM files; when both are set the server speaks HTTPS.
	TLSCert string `mapstructure:"tls_cert"`
	TLSKey  string `mapstructure:"tls_key"`
}

// Notify lists notification receivers.
type Notify struct {
	// Webhooks receive a JSON POST per event.
	Webhooks []notify.Webhook `mapstructure:"webhooks"`
}

// Display sets how the status page shows values; metrics stay in base units.
type Display struct {
	// Units is "C" (default) or "F".
	Units string `mapstructure:"units"`
	// TimeLapse is set by `settle run --demo` (never read from a file): the simulated
	// rack's speed, physical seconds per wall second, which the page shows as a badge.
	TimeLapse float64 `mapstructure:"-"`
}

// Logger is one data logger on one serial port.
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
	// Clean tunes the spike and stuck-reading checks for this logger's channels.
	Clean Cleaning `mapstructure:"clean"`
}

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

// Column maps one field of a line to a channel.
type Column struct {
	// Index is the 1-based field index, counted as in a spreadsheet.
	Index int `mapstructure:"index"`
	// Channel is the name of the channel (one of `channels[].name`).
	Channel string `mapstructure:"channel"`
}

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

// ModbusFormat describes a Modbus RTU device polled with functions 03 and 04.
type ModbusFormat struct {
	// Slave is the device address, 1–247.
	Slave int `mapstructure:"slave"`
	// Parity is "N", "E" (default; the Modbus serial-line default) or "O".
	Parity string `mapstructure:"parity"`
	// StopBits is 1 (default) or 2.
	StopBits int `mapstructure:"stop_bits"`
	// Interval is the time between polls (default 1s).
	Interval time.Duration `mapstructure:"interval"`
	// Timeout bounds one request and its response (default 500ms).
	Timeout time.Duration `mapstructure:"timeout"`
	// Registers map registers to channels.
	Registers []Register `mapstructure:"registers"`
}

// Register maps one value held in one or two Modbus registers to a channel. The value
// is raw·Scale + Offset, in the channel's input unit.
type Register struct {
	// Channel is the name of the channel.
	Channel string `mapstructure:"channel"`
	// Function is 3 (holding registers, default) or 4 (input registers).
	Function int `mapstructure:"function"`
	// Address is the 0-based register address as sent on the wire.
	Address int `mapstructure:"address"`
	// Type is "int16" (default), "uint16", "int32", "uint32" or "float32".
	Type string `mapstructure:"type"`
	// WordOrder is "high_first" (default; the high word at Address) or "low_first",
	// for 32-bit types.
	WordOrder string `mapstructure:"word_order"`
	// Scale multiplies the raw value (0 or absent: 1).
	Scale float64 `mapstructure:"scale"`
	// Offset is added after Scale.
	Offset float64 `mapstructure:"offset"`
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

// Cleaning tunes the checks readings pass before they reach a fit.
type Cleaning struct {
	// SpikeWindow is the Hampel window length in readings, odd (default 7; 1 turns
	// the spike check off). Readings leave the cleaner (SpikeWindow−1)/2 readings late.
	SpikeWindow int `mapstructure:"spike_window"`
	// SpikeSigmas is the Hampel threshold in robust standard deviations (default 3).
	SpikeSigmas float64 `mapstructure:"spike_sigmas"`
	// SpikeMinCelsius is the smallest deviation ever called a spike (default 0.5 °C),
	// so that a quiet, quantised signal is not flagged on every step.
	SpikeMinCelsius float64 `mapstructure:"spike_min_celsius"`
	// StuckCount flags a reading as stuck when it is the N-th identical value in a row
	// (default 0: off; set it where noise is expected in the last digit).
	StuckCount int `mapstructure:"stuck_count"`
	// MinCelsius and MaxCelsius bound a plausible reading; outside is out of range
	// (defaults −273.15 and 2000).
	MinCelsius *float64 `mapstructure:"min_celsius"`
	MaxCelsius *float64 `mapstructure:"max_celsius"`
}

// Channel is one measured point: a specimen's thermocouple or an ambient sensor.
type Channel struct {
	// Name identifies the channel.
	Name string `mapstructure:"name"`
	// Ambient names another channel that measures this one's surroundings (optional;
	// without it the ambient is fitted).
	Ambient string `mapstructure:"ambient"`
	// Role is "position" (a specimen position, the default) or "ambient" (a sensor of
	// the room's air: shown as the room, never fitted or forecast). A channel named as
	// another's ambient is an ambient sensor without saying so.
	Role string `mapstructure:"role"`
	// Targets are the temperatures to forecast.
	Targets []Target `mapstructure:"targets"`
	// Run, when set, starts a run on this channel at start-up unless one is active.
	Run *Run `mapstructure:"run"`
	// Specimen, when set, describes the specimen on this channel (shape, size,
	// sensor position, material by name or by properties; see Specimen), so the
	// forecaster can report its Biot number and model conduction inside it.
	Specimen *Specimen `mapstructure:"specimen"`
}

// Run names the specimen on a channel, for the record.
type Run struct {
	// Specimen identifies the specimen, e.g. a lab sample number.
	Specimen string `mapstructure:"specimen"`
	// Description is free text for the record.
	Description string `mapstructure:"description"`
}

// Target is a temperature to forecast: a fixed Celsius value, a band Within °C of the
// settling temperature, or (with Hold) a band Within °C of Celsius held for Hold.
type Target struct {
	// Name identifies the target within its channel.
	Name string `mapstructure:"name"`
	// Celsius is a fixed target temperature. With Within and Hold it is the centre of
	// a band the channel must stay in for the hold time.
	Celsius *float64 `mapstructure:"celsius"`
	// Within is a band half-width in °C: around Celsius when that is given, else
	// around the temperature the channel settles toward.
	Within *float64 `mapstructure:"within"`
	// Hold is how long the temperature must stay in the band (optional).
	Hold time.Duration `mapstructure:"hold"`
	// Handling marks a safe-to-handle target (outputs show handling cautions).
	Handling bool `mapstructure:"handling"`
}
