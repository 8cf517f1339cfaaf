package daq

import (
	"fmt"
	"log/slog"
	"math"
	"strings"
	"time"
)

// The Modbus driver's settings: its section of a logger ("modbus"), their defaults
// and their checks.

func init() {
	Register("modbus", Driver{
		New:     func(l Logger, log *slog.Logger) (Source, error) { return NewModbusSource(l, log) },
		Section: func(l Logger) Section { return l.Modbus },
	})
}

// Defaults of the modbus section, used where a key is absent (zero).
const (
	// DefaultModbusTimeout bounds one Modbus request and response.
	DefaultModbusTimeout = 500 * time.Millisecond
	// DefaultParity is the Modbus serial-line default, even parity (Modbus over
	// Serial Line Specification V1.02, section 2.5.1; from memory).
	DefaultParity = "E"
)

// RegisterTypes are the Modbus register value types (ModbusRegister.Type).
var RegisterTypes = []string{"int16", "uint16", "int32", "uint32", "float32"}

// ModbusFormat describes a Modbus RTU device polled with functions 03 and 04.
type ModbusFormat struct {
	// Slave is the device address, 1–247.
	Slave int `mapstructure:"slave"`
	// Parity is "N", "E" (default; the Modbus serial-line default) or "O".
	Parity string `mapstructure:"parity"`
	// StopBits is 1 (default) or 2.
	StopBits int `mapstructure:"stop_bits"`
	// Interval is the time between polls (default 1s).
	Interval time.Duration `mapstructure:"interval"`
	// Timeout bounds one request and its response (default 500ms).
	Timeout time.Duration `mapstructure:"timeout"`
	// Registers map registers to channels.
	Registers []ModbusRegister `mapstructure:"registers"`
}

// ModbusRegister maps one value held in one or two Modbus registers to a channel. The
// value is raw·Scale + Offset, in the channel's input unit.
type ModbusRegister struct {
	// Channel is the name of the channel.
	Channel string `mapstructure:"channel"`
	// Function is 3 (holding registers, default) or 4 (input registers).
	Function int `mapstructure:"function"`
	// Address is the 0-based register address as sent on the wire.
	Address int `mapstructure:"address"`
	// Type is "int16" (default), "uint16", "int32", "uint32" or "float32".
	Type string `mapstructure:"type"`
	// WordOrder is "high_first" (default; the high word at Address) or "low_first",
	// for 32-bit types.
	WordOrder string `mapstructure:"word_order"`
	// Scale multiplies the raw value (0 or absent: 1).
	Scale float64 `mapstructure:"scale"`
	// Offset is added after Scale.
	Offset float64 `mapstructure:"offset"`
}

// Channels lists the channels of the registers, in order.
func (m ModbusFormat) Channels() []string {
	out := make([]string, 0, len(m.Registers))
	for _, r := range m.Registers {
		out = append(out, r.Channel)
	}
	return out
}

// Check reports what is wrong with the modbus section at key, and every channel its
// registers read.
func (m ModbusFormat) Check(c Checker, key string) {
	// Modbus Application Protocol V1.1b3, section 4.2 (from memory): 0 is broadcast,
	// 248–255 are reserved; a read needs an individual address.
	if m.Slave < 1 || m.Slave > 247 {
		c.Add(key+".slave", "must be a device address 1–247, got %d", m.Slave)
	}
	switch m.Parity {
	case "", "N", "E", "O":
	default:
		c.Add(key+".parity", `want "N", "E" or "O", got %q`, m.Parity)
	}
	if m.StopBits != 0 && m.StopBits != 1 && m.StopBits != 2 {
		c.Add(key+".stop_bits", "want 1 or 2, got %d", m.StopBits)
	}
	checkPoll(c, key, m.Interval, m.Timeout)
	if len(m.Registers) == 0 {
		c.Add(key+".registers", "at least one register is needed")
	}
	for i, r := range m.Registers {
		rKey := fmt.Sprintf("%s.registers[%d]", key, i)
		r.check(c, rKey)
		c.Reads(rKey+".channel", r.Channel)
	}
}

func (r ModbusRegister) check(c Checker, key string) {
	if r.Function != 0 && r.Function != 3 && r.Function != 4 {
		c.Add(key+".function", "want 3 (holding registers) or 4 (input registers), got %d", r.Function)
	}
	words := 1
	switch r.Type {
	case "", "int16", "uint16":
	case "int32", "uint32", "float32":
		words = 2
	default:
		c.Add(key+".type", "want one of %s, got %q", strings.Join(RegisterTypes, ", "), r.Type)
	}
	if r.Address < 0 || r.Address+words > 0x10000 {
		c.Add(key+".address", "must be 0–%d for %d register(s), got %d", 0x10000-words, words, r.Address)
	}
	switch r.WordOrder {
	case "", "high_first", "low_first":
	default:
		c.Add(key+".word_order", `want "high_first" or "low_first", got %q`, r.WordOrder)
	}
	if math.IsNaN(r.Scale) || math.IsInf(r.Scale, 0) || math.IsNaN(r.Offset) || math.IsInf(r.Offset, 0) {
		c.Add(key, "scale and offset must be finite")
	}
}
