// Package daq owns data acquisition: the Reading type, the Source interface, serial
// port handling (open, reconnect, list), the logger drivers, thermocouple conversion
// and the cleaning of readings before they reach a fit.
//
// Each driver registers itself (Register) from its own file, with its own section of
// a logger's settings (a field of Logger), their defaults and their checks; the
// configuration embeds Logger, so a new protocol is one new file plus that field.
//
// A driver never exits because of a bad line or a vanished port: it reports the fault
// (as a Reading with a fault status, or through its counters), backs off and reopens.
// Package daq knows nothing of models; predict consumes what it produces.
package daq
