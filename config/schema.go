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
	Webhooks []Webhook `mapstructure:"webhooks"`
}

// Webhook is one HTTP receiver of notifications.
type Webhook struct {
	// Name identifies the webhook in logs and metrics.
	Name string `mapstructure:"name"`
	// URL is where events are POSTed (http or https).
	URL string `mapstructure:"url"`
	// LeadTime sends a "soon" event when a forecast falls below it (0: no such event).
	LeadTime time.Duration `mapstructure:"lead_time"`
	// Events selects the event kinds: reached, soon, fault (empty: all).
	Events []string `mapstructure:"events"`
}

// Display sets how the status page shows values; metrics stay in base units.
type Display struct {
	// Units is "C" (default) or "F".
	Units string `mapstructure:"units"`
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
