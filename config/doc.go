// Package config reads settle's YAML configuration and composes the other packages'
// settings from it: it is where a file becomes the daemon's parts.
//
// # Where to start
//
//   - Load and Parse (ExampleParse) decode a file with defaults filled and unknown
//     keys refused, apply the SETTLE_ environment overrides and Validate it,
//     reporting every problem at once with its line and key path; Reload does the
//     same into a new value for SIGHUP (decode, validate, then swap).
//   - Config embeds the parts' own settings types rather than declaring them again:
//     a logger is daq.Logger (each driver's section, defaults and checks live with
//     the driver in daq), cleaning is daq/clean's Options, a specimen is
//     predict.Specimen, a webhook is notify.Webhook.
//   - ChannelSpecs turns the file's channels, targets and specimens into the engine's
//     ChannelSpec, for the daemon and for reports.
//   - example.yaml is what `settle config example` prints; a test holds it to the
//     driver registry and to starting the engine.
//
// It opens no ports and no files other than the configuration (and specimen) files
// themselves; `settle config check` adds the host checks (ports, TLS files).
package config
