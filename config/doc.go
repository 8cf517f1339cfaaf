// Package config owns settle's YAML configuration: the schema, defaults, validation
// with the file and key path in every message, environment overrides (SETTLE_ prefix)
// and reload (decode into a new value, validate, then swap).
//
// It opens no ports and no files other than the configuration file itself.
package config
