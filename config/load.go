package config

import (
	"bytes"
	"errors"
	"fmt"
	"sync/atomic"
	"time"

	"github.com/go-viper/mapstructure/v2"
	"github.com/settle-lab/settle/internal/yamlfile"
	"github.com/spf13/viper"
)

// Defaults filled in for keys the file leaves out.
const (
	// DefaultListen is the HTTP listen address. Loopback, so that a first run exposes
	// nothing to the network; set listen (or SETTLE_LISTEN) to ":8391" to let a
	// Prometheus server on another host scrape it.
	//
	// Port 8391: the Prometheus exporter range 9100–9999 is fully allocated, so settle
	// sits outside it, on a port that no widely used exporter or server takes as its
	// default, to the team's knowledge (from memory, not checked against a published
	// list). Change listen where something else already uses it.
	DefaultListen = "127.0.0.1:8391"
	// DefaultDataDir holds the journal when data_dir is not given. It is relative to
	// the working directory, so that a first try in a shell works without root and
	// leaves its data where it was started. A service should set an absolute path: a
	// systemd unit with StateDirectory=settle sets SETTLE_DATA_DIR=/var/lib/settle.
	DefaultDataDir = "settle-data"
)

// Environment variables that override the file. Only these exist: viper needs an
// explicit bind for every key, and list items (loggers, channels) have no stable name
// to bind.
const (
	// EnvListen overrides listen.
	EnvListen = "SETTLE_LISTEN"
	// EnvDataDir overrides data_dir.
	EnvDataDir = "SETTLE_DATA_DIR"
	// EnvToken overrides http.token, so the secret need not sit in the file.
	EnvToken = "SETTLE_TOKEN"
)

// DefaultCommitInterval is the journal's default commit interval.
const DefaultCommitInterval = time.Second

// MaxFileSize bounds a configuration file; a larger file is refused before parsing.
const MaxFileSize = yamlfile.MaxFileSize

// Load reads the YAML file at path, fills in defaults, applies the SETTLE_LISTEN and
// SETTLE_DATA_DIR environment overrides, decodes with unknown keys rejected and
// validates. Every problem names the file (as path was given) and the key path or
// line; all problems are returned together, joined with errors.Join.
func Load(path string) (*Config, error) {
	data, err := yamlfile.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return Parse(path, data)
}

// Parse is Load for a configuration already in memory; name stands for the file name
// in messages. Environment overrides apply here too.
//
// A syntax error, or keys of one mapping that differ only in case (which viper would
// merge silently), stop the reading before decoding; every other problem is found
// and returned at once, each with the line of its key where the file has it.
func Parse(name string, yaml []byte) (*Config, error) {
	t, problems := yamlfile.ReadTree(yaml)
	if problems != nil {
		return nil, yamlfile.InFile(name, problems)
	}
	v, problems := readYAML(yaml)
	if problems != nil {
		return nil, yamlfile.InFile(name, t.Locate(problems, envKeys))
	}
	var c Config
	var decoded []*Problem
	if err := v.UnmarshalExact(&c, decoderOptions); err != nil {
		decoded = decodeProblems(err)
	}
	if problems := yamlfile.AfterDecode(decoded, c.validate()); len(problems) > 0 {
		return nil, yamlfile.InFile(name, t.Locate(problems, envKeys))
	}
	return &c, nil
}

// Reload loads the file at path and, only when it is valid, stores it in current.
// On any problem current keeps the configuration it had and the problems are
// returned. Readers use current.Load() and never see a half-made value.
func Reload(path string, current *atomic.Pointer[Config]) error {
	if current == nil {
		return fmt.Errorf("reload %s: no configuration holder", path)
	}
	c, err := Load(path)
	if err != nil {
		return err
	}
	current.Store(c)
	return nil
}

// readYAML parses the YAML into a fresh viper with defaults and environment binds.
func readYAML(data []byte) (*viper.Viper, []*Problem) {
	v := viper.New()
	v.SetConfigType("yaml")
	v.SetDefault("listen", DefaultListen)
	v.SetDefault("data_dir", DefaultDataDir)
	// BindEnv only fails without a key name; these calls always have one.
	_ = v.BindEnv("listen", EnvListen)
	_ = v.BindEnv("data_dir", EnvDataDir)
	_ = v.BindEnv("http.token", EnvToken)
	v.SetDefault("journal.commit_interval", DefaultCommitInterval.String())
	v.SetDefault("display.units", "C")
	if err := v.ReadConfig(bytes.NewReader(data)); err != nil {
		var pe viper.ConfigParseError
		if errors.As(err, &pe) {
			return nil, yamlProblems(pe.Unwrap())
		}
		return nil, []*Problem{{Msg: err.Error()}}
	}
	fillLoggerDefaults(v)
	return v, nil
}

// fillLoggerDefaults adds baud, format and the drivers' section defaults (such as
// line.separator) to every logger that lacks them. viper's defaults cannot reach into
// list items, and filling them in before decoding (rather than after) keeps an
// explicit "baud: 0" an error.
func fillLoggerDefaults(v *viper.Viper) {
	list, ok := v.Get("loggers").([]any)
	if !ok {
		return // absent, or the wrong type: the decoder reports the latter
	}
	filled := make([]any, len(list))
	for i, item := range list {
		filled[i] = withLoggerDefaults(item)
	}
	v.Set("loggers", filled)
}

func setIfAbsent(m map[string]any, key string, val any) {
	if _, ok := m[key]; !ok {
		m[key] = val
	}
}

// decoderOptions makes decoding strict: no weak conversion ("fast" never becomes a
// baud rate, 5 never becomes a name) and our own hook for types and durations.
func decoderOptions(dc *mapstructure.DecoderConfig) {
	dc.WeaklyTypedInput = false
	dc.DecodeHook = mapstructure.DecodeHookFuncValue(yamlfile.CheckValue)
}
