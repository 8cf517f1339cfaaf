// Package yamlfile reads a YAML file strictly into Go values and reports every
// problem at once, each with its file, line and key path: a syntax error at the line
// of the mistake, keys that differ only in case, unknown keys (with the keys known
// there), values of the wrong type, and the validation problems a caller adds.
//
// It is the reader under both the configuration (package config) and a specimen file
// (package predict), so that the two say the same things in the same words; it knows
// neither schema.
package yamlfile
