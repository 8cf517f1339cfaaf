package config

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
}

// Logger is one data logger on one serial port.
type Logger struct {
	// Name identifies the logger in logs and metric labels.
	Name string `mapstructure:"name"`
	// Port is the serial device path, preferably a stable /dev/serial/by-id/… link.
	Port string `mapstructure:"port"`
	// Baud is the line speed (default 9600).
	Baud int `mapstructure:"baud"`
	// Format selects the driver: "line" (text lines).
	Format string `mapstructure:"format"`
	// Line configures the line driver.
	Line LineFormat `mapstructure:"line"`
}

// LineFormat describes a delimiter-separated text line.
type LineFormat struct {
	// Separator splits a line into fields (default ",").
	Separator string `mapstructure:"separator"`
	// ClockColumn is the 1-based field holding the logger's clock in seconds; 0 means
	// the host's receive time is used.
	ClockColumn int `mapstructure:"clock_column"`
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

// Channel is one measured point: a specimen's thermocouple or an ambient sensor.
type Channel struct {
	// Name identifies the channel.
	Name string `mapstructure:"name"`
	// Ambient names another channel that measures this one's surroundings (optional;
	// without it the ambient is fitted).
	Ambient string `mapstructure:"ambient"`
	// Targets are the temperatures to forecast.
	Targets []Target `mapstructure:"targets"`
}

// Target is a temperature to forecast: either a fixed Celsius value or a band Within
// °C of the settling temperature.
type Target struct {
	// Name identifies the target within its channel.
	Name string `mapstructure:"name"`
	// Celsius is a fixed target temperature (nil when Within is used).
	Celsius *float64 `mapstructure:"celsius"`
	// Within is a band half-width in °C around the settling temperature (nil when
	// Celsius is used).
	Within *float64 `mapstructure:"within"`
	// Hold is how long the temperature must stay in the band (optional).
	Hold time.Duration `mapstructure:"hold"`
	// Handling marks a safe-to-handle target (outputs show handling cautions).
	Handling bool `mapstructure:"handling"`
}
