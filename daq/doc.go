// Package daq is data acquisition: it reads the loggers and hands on Readings — one
// channel's temperature (or fault) at one time — and knows nothing of models.
//
// # Where to start
//
//   - Reading and Status are what every other part consumes; Source is a running
//     driver (Run sends readings until its context ends); NewSource builds the
//     driver a Logger's Format names.
//   - Drivers register themselves (Register) from their own files, each with its
//     section of a Logger's settings, their defaults and their checks: the line
//     driver (linesource.go, lineparser.go; ExampleLineParser), the query driver for
//     SCPI-style loggers (querysource.go) and Modbus RTU (modbussource.go, framing
//     in daq/modbus). A new protocol is one new file here plus its field in Logger;
//     the configuration embeds Logger and checks it through the registry.
//   - port.go wraps go.bug.st/serial: exclusive open, a 0-byte timed-out read is no
//     data, and one reopen-with-backoff loop (keepOpen) for every driver, so an
//     unplugged adapter is read again within about a second of its return.
//   - convert.go turns a field into °C (°F, K, and thermocouple mV through
//     daq/thermocouple's ITS-90 functions with cold-junction compensation).
//
// Beside it: daq/clean screens readings (open circuit, range, spikes, stuck) before
// anything is recorded or fitted; daq/journal records every reading in SQLite;
// daq/ptytest makes pseudo-terminal pairs for the tests.
//
// A driver never exits because of a bad line or a vanished port: it reports the fault
// (as a Reading with a fault status, or through its counters), backs off and reopens.
package daq
