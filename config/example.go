package config

import _ "embed"

// Example is a commented example configuration that passes Parse; `settle config
// example` prints it.
//
//go:embed example.yaml
var Example string
