// Package modbus is a small Modbus RTU client for reading registers (functions 03,
// read holding registers, and 04, read input registers) over any serial port that
// reads with a timeout, such as a go.bug.st/serial port.
//
// The framing is our own, after the Modbus over Serial Line Specification and
// Implementation Guide V1.02 and the Modbus Application Protocol Specification
// V1.1b3: an address byte, the PDU, and the CRC-16 (polynomial 0xA001 reflected,
// initial value 0xFFFF) sent low byte first. A request is sent only after the line
// has been silent for 3.5 character times (1.75 ms above 19200 baud, as the serial
// line specification recommends); the response length follows from its byte count;
// an exception response (function code + 0x80) becomes an *ExceptionError; after any
// failed request the client drains and flushes its input, so that a late or garbled
// response cannot be taken for the answer to the next request.
package modbus
