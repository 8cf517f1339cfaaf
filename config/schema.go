package config

import (
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/clean"
	"github.com/settle-lab/settle/notify"
	"github.com/settle-lab/settle/predict"
)

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

// Logger is one data logger on one serial port: what its driver reads (daq.Logger:
// name, port, baud, format, the format's own section such as line, inputs and open;
// each driver declares and checks its section in package daq) and how its readings
// are cleaned.
type Logger struct {
	daq.Logger `mapstructure:",squash"`
	// Clean tunes the spike and stuck-reading checks for this logger's channels.
	Clean clean.Options `mapstructure:"clean"`
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
	// sensor position, material by name or by properties; see predict.Specimen, the
	// schema of a `settle fit --specimen` file too), so the forecaster can report its
	// Biot number and model conduction inside it.
	Specimen *predict.Specimen `mapstructure:"specimen"`
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
