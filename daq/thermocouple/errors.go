package thermocouple

import (
	"errors"
	"fmt"
	"strconv"
)

var (
	// ErrOutOfRange is wrapped by every error for a temperature or EMF outside the
	// range of the reference function or its inverse.
	ErrOutOfRange = errors.New("thermocouple: value out of range")
	// ErrUnknownType is wrapped by every error for a type that is not B, E, J, K, N,
	// R, S or T.
	ErrUnknownType = errors.New("thermocouple: unknown type")
)

// RangeError reports a temperature or EMF outside the valid range of a conversion.
// It wraps ErrOutOfRange.
type RangeError struct {
	// Type is the thermocouple type.
	Type Type
	// Quantity is "temperature" (input in °C) or "EMF" (input in mV).
	Quantity string
	// Value is the rejected input.
	Value float64
	// Lo and Hi bound the valid range, inclusive.
	Lo, Hi float64
	// Note explains the range where the reason is not obvious; it may be empty.
	Note string
}

// Error names the type, the value (to 8 significant digits) and the valid range.
func (e *RangeError) Error() string {
	unit, prec := "°C", -1
	if e.Quantity == "EMF" {
		unit, prec = "mV", 4
	}
	msg := fmt.Sprintf("thermocouple type %v: %s %s %s is outside the valid range %s to %s %s",
		e.Type, e.Quantity, strconv.FormatFloat(e.Value, 'g', 8, 64), unit,
		strconv.FormatFloat(e.Lo, 'f', prec, 64), strconv.FormatFloat(e.Hi, 'f', prec, 64), unit)
	if e.Note != "" {
		msg += " (" + e.Note + ")"
	}
	return msg
}

// Unwrap returns ErrOutOfRange so that errors.Is(err, ErrOutOfRange) holds.
func (e *RangeError) Unwrap() error { return ErrOutOfRange }

func unknownType(t Type) error {
	return fmt.Errorf("%w %v (want one of B, E, J, K, N, R, S, T)", ErrUnknownType, t)
}
