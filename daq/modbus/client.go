package modbus

import (
	"errors"
	"fmt"
	"io"
	"time"
)

// Port is what the client needs of a serial port; go.bug.st/serial's Port has it. A
// Read that times out returns 0 bytes and no error.
type Port interface {
	io.ReadWriter
	// SetReadTimeout bounds the next Reads.
	SetReadTimeout(t time.Duration) error
	// ResetInputBuffer discards bytes received and not yet read.
	ResetInputBuffer() error
}

// DefaultTimeout is the per-request deadline of a Client with Timeout 0.
const DefaultTimeout = 500 * time.Millisecond

// drainQuiet is how long the line must stay silent before a flush after an error is
// believed to have caught the tail of a late response.
const drainQuiet = 20 * time.Millisecond

// Client sends read requests on one port and reads their responses, one at a time. It
// is not safe for concurrent use.
type Client struct {
	port Port
	// Gap is the silent interval kept before each request (3.5 character times).
	Gap time.Duration
	// Timeout is the per-request deadline from the end of sending to the last byte of
	// the response (DefaultTimeout when 0).
	Timeout time.Duration

	quietSince time.Time     // when the line last carried a byte, as far as we know
	buf        [5 + 255]byte // the longest frame a one-byte count can announce
}

// NewClient returns a client on port for a line at baud bits per second with
// bitsPerChar bits per character (11 for 8 data bits with parity and one stop bit, or
// without parity and two; 10 for 8N1).
func NewClient(port Port, baud, bitsPerChar int) *Client {
	return &Client{port: port, Gap: Gap(baud, bitsPerChar)}
}

// Gap returns the 3.5-character silent interval that separates RTU frames: 3.5 ×
// bitsPerChar / baud, and a fixed 1.75 ms above 19200 baud (Modbus over Serial Line
// V1.02, section 2.5.1.1; from memory).
func Gap(baud, bitsPerChar int) time.Duration {
	if baud <= 0 || baud > 19200 {
		return 1750 * time.Microsecond
	}
	return time.Duration(3.5 * float64(bitsPerChar) / float64(baud) * float64(time.Second))
}

// ReadRegisters reads count (1–125) registers from address addr of device slave with
// function fn (ReadHoldingRegisters or ReadInputRegisters). On any error the input is
// drained and flushed before returning, so the next request starts clean.
func (c *Client) ReadRegisters(slave, fn byte, addr, count uint16) ([]uint16, error) {
	if count < 1 || count > MaxRegisters {
		return nil, fmt.Errorf("modbus: read of %d registers: want 1–%d", count, MaxRegisters)
	}
	regs, err := c.exchange(slave, fn, addr, count)
	if err != nil {
		c.flush()
		return nil, fmt.Errorf("read %d registers at %d, function %02d, device %d: %w", count, addr, fn, slave, err)
	}
	return regs, nil
}

func (c *Client) exchange(slave, fn byte, addr, count uint16) ([]uint16, error) {
	if wait := time.Until(c.quietSince.Add(c.Gap)); wait > 0 {
		time.Sleep(wait)
	}
	if _, err := c.port.Write(ReadRequest(slave, fn, addr, count)); err != nil {
		return nil, fmt.Errorf("send request: %w", err)
	}
	c.quietSince = time.Now()
	timeout := c.Timeout
	if timeout <= 0 {
		timeout = DefaultTimeout
	}
	frame, err := c.readFrame(time.Now().Add(timeout))
	if err != nil {
		return nil, err
	}
	return DecodeResponse(frame, slave, fn, count)
}

// readFrame reads the three-byte prefix, then as many bytes as it announces.
func (c *Client) readFrame(deadline time.Time) ([]byte, error) {
	got := 0
	want := 3
	for got < want {
		left := time.Until(deadline)
		if left <= 0 {
			return nil, fmt.Errorf("%w: %d of %d bytes", ErrTimeout, got, want)
		}
		if err := c.port.SetReadTimeout(left); err != nil {
			return nil, fmt.Errorf("set read timeout: %w", err)
		}
		n, err := c.port.Read(c.buf[got:want])
		if err != nil {
			return nil, fmt.Errorf("read response: %w", err)
		}
		if n > 0 {
			c.quietSince = time.Now()
		}
		got += n
		if got >= 3 && want == 3 {
			want, _ = ResponseLength(c.buf[:3])
		}
	}
	return c.buf[:got], nil
}

// flush waits until the line has been quiet for a while (bounded by the request
// timeout), then discards whatever is buffered.
func (c *Client) flush() {
	quiet := max(c.Gap, drainQuiet)
	end := time.Now().Add(max(c.Timeout, DefaultTimeout))
	var scratch [64]byte
	for time.Now().Before(end) {
		if c.port.SetReadTimeout(quiet) != nil {
			break
		}
		n, err := c.port.Read(scratch[:])
		if err != nil || n == 0 {
			break
		}
		c.quietSince = time.Now()
	}
	_ = c.port.ResetInputBuffer()
}

// IsTransient reports whether err is a protocol fault (timeout, CRC, framing,
// exception) after which the port itself is still usable.
func IsTransient(err error) bool {
	var ex *ExceptionError
	return errors.Is(err, ErrTimeout) || errors.Is(err, ErrCRC) || errors.Is(err, ErrFrame) || errors.As(err, &ex)
}
