package modbus

import (
	"encoding/binary"
	"errors"
	"fmt"
)

// The register-reading function codes.
const (
	// ReadHoldingRegisters is function 03.
	ReadHoldingRegisters byte = 3
	// ReadInputRegisters is function 04.
	ReadInputRegisters byte = 4
)

// MaxRegisters is the most registers one read may ask for (Modbus Application
// Protocol V1.1b3, section 6.3: quantity 1 to 125).
const MaxRegisters = 125

// Errors a response can fail with; they wrap into errors naming the request.
var (
	// ErrCRC reports a response whose CRC does not match.
	ErrCRC = errors.New("modbus: CRC mismatch")
	// ErrFrame reports a response that is not the answer to the request (wrong
	// address, function or byte count, or a bad length).
	ErrFrame = errors.New("modbus: malformed response")
	// ErrTimeout reports a response that did not arrive complete before the deadline.
	ErrTimeout = errors.New("modbus: response timed out")
)

// ExceptionError is an exception response: the device understood the request and
// refused it.
type ExceptionError struct {
	// Function is the request's function code (without the 0x80 bit).
	Function byte
	// Code is the exception code (1 illegal function, 2 illegal data address, 3
	// illegal data value, 4 server device failure, …).
	Code byte
}

// Error names the exception.
func (e *ExceptionError) Error() string {
	names := map[byte]string{1: "illegal function", 2: "illegal data address", 3: "illegal data value",
		4: "server device failure", 5: "acknowledge", 6: "server device busy", 11: "gateway target failed to respond"}
	name, ok := names[e.Code]
	if !ok {
		name = "unknown exception"
	}
	return fmt.Sprintf("modbus: exception %d (%s) to function %02d", e.Code, name, e.Function)
}

// ReadRequest returns the RTU frame asking device slave for count registers from
// address addr with function fn (03 or 04).
func ReadRequest(slave, fn byte, addr, count uint16) []byte {
	b := []byte{slave, fn, 0, 0, 0, 0}
	binary.BigEndian.PutUint16(b[2:], addr)
	binary.BigEndian.PutUint16(b[4:], count)
	return appendCRC(b)
}

// ResponseLength returns the full length of a response frame from its first three
// bytes: an exception response is 5 bytes, a register response 5 + its byte count. It
// returns false for a prefix shorter than 3 bytes.
func ResponseLength(prefix []byte) (int, bool) {
	if len(prefix) < 3 {
		return 0, false
	}
	if prefix[1]&0x80 != 0 {
		return 5, true
	}
	return 5 + int(prefix[2]), true
}

// DecodeResponse checks a complete response frame to a read of count registers with
// function fn from device slave and returns the register values. An exception
// response gives an *ExceptionError; other faults wrap ErrCRC or ErrFrame.
func DecodeResponse(frame []byte, slave, fn byte, count uint16) ([]uint16, error) {
	n, ok := ResponseLength(frame)
	if !ok || n != len(frame) {
		return nil, fmt.Errorf("%w: %d bytes", ErrFrame, len(frame))
	}
	if !checkCRC(frame) {
		return nil, fmt.Errorf("%w: frame % x", ErrCRC, frame)
	}
	if frame[0] != slave {
		return nil, fmt.Errorf("%w: from address %d, asked %d", ErrFrame, frame[0], slave)
	}
	if frame[1] == fn|0x80 {
		return nil, &ExceptionError{Function: fn, Code: frame[2]}
	}
	if frame[1] != fn {
		return nil, fmt.Errorf("%w: function %d, asked %d", ErrFrame, frame[1], fn)
	}
	if int(frame[2]) != 2*int(count) {
		return nil, fmt.Errorf("%w: byte count %d, asked %d registers", ErrFrame, frame[2], count)
	}
	regs := make([]uint16, count)
	for i := range regs {
		regs[i] = binary.BigEndian.Uint16(frame[3+2*i:])
	}
	return regs, nil
}
