package modbus

import (
	"bytes"
	"encoding/hex"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// TestCRC checks the CRC against published examples.
func TestCRC(t *testing.T) {
	tests := []struct {
		name string
		in   []byte
		want uint16
	}{
		// Modbus over Serial Line Specification and Implementation Guide V1.02,
		// section 6.2.2 (CRC generation), worked example: the frame 02 07 has CRC
		// 0x1241, sent as 41 12. Quoted from memory.
		{"serial-line spec example 02 07", []byte{0x02, 0x07}, 0x1241},
		// CRC-16/MODBUS check value over the ASCII digits "123456789" is 0x4B37
		// (Greg Cook's catalogue of parametrised CRC algorithms, CRC-16/MODBUS entry;
		// from memory).
		{"catalogue check value", []byte("123456789"), 0x4B37},
	}
	for _, tt := range tests {
		if got := CRC(tt.in); got != tt.want {
			t.Errorf("%s: CRC = %#04x, want %#04x", tt.name, got, tt.want)
		}
	}
	// Wire order: low byte first, as in the specification's example (41 12).
	if got := appendCRC([]byte{0x02, 0x07}); !bytes.Equal(got, []byte{0x02, 0x07, 0x41, 0x12}) {
		t.Errorf("appendCRC(02 07) = % x, want 02 07 41 12", got)
	}
}

func TestReadRequest(t *testing.T) {
	got := ReadRequest(0x11, ReadHoldingRegisters, 0x006B, 3)
	// Modbus Application Protocol V1.1b3, section 6.3 example PDU: 03 00 6B 00 03
	// (read registers 108–110; from memory); device 0x11, CRC ours, checked below.
	if !bytes.Equal(got[:6], []byte{0x11, 0x03, 0x00, 0x6B, 0x00, 0x03}) {
		t.Fatalf("ReadRequest = % x", got)
	}
	if !checkCRC(got) {
		t.Errorf("ReadRequest CRC does not check: % x", got)
	}
}

// response builds a register response frame.
func response(slave, fn byte, regs ...uint16) []byte {
	b := []byte{slave, fn, byte(2 * len(regs))}
	for _, r := range regs {
		b = append(b, byte(r>>8), byte(r))
	}
	return appendCRC(b)
}

func TestDecodeResponse(t *testing.T) {
	good := response(1, 3, 0x022B, 0x0000, 0x0064)
	corrupt := bytes.Clone(good)
	corrupt[4] ^= 0x10
	exc := appendCRC([]byte{1, 0x83, 2})
	tests := []struct {
		name  string
		frame []byte
		want  []uint16
		err   error
	}{
		{"ok", good, []uint16{0x022B, 0, 0x64}, nil},
		{"bad crc", corrupt, nil, ErrCRC},
		{"wrong slave", response(2, 3, 1, 2, 3), nil, ErrFrame},
		{"wrong function", response(1, 4, 1, 2, 3), nil, ErrFrame},
		{"short count", response(1, 3, 1, 2), nil, ErrFrame},
		{"truncated", good[:len(good)-1], nil, ErrFrame},
		{"empty", nil, nil, ErrFrame},
	}
	for _, tt := range tests {
		got, err := DecodeResponse(tt.frame, 1, 3, 3)
		if !errors.Is(err, tt.err) || (tt.err == nil && !equal(got, tt.want)) {
			t.Errorf("%s: DecodeResponse = %v, %v; want %v, %v", tt.name, got, err, tt.want, tt.err)
		}
	}
	_, err := DecodeResponse(exc, 1, 3, 3)
	var ex *ExceptionError
	if !errors.As(err, &ex) || ex.Code != 2 || ex.Function != 3 {
		t.Errorf("exception frame: err = %v, want exception 2 to function 03", err)
	}
}

func equal(a, b []uint16) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func TestValue(t *testing.T) {
	f := math.Float32bits(21.5) // 0x41AC0000
	tests := []struct {
		regs     []uint16
		typ      Type
		lowFirst bool
		want     float64
	}{
		{[]uint16{0xFFFF}, Int16, false, -1},
		{[]uint16{0xFFFF}, Uint16, false, 65535},
		{[]uint16{0xFFFF, 0xFFFE}, Int32, false, -2},
		{[]uint16{0x0001, 0x0002}, Uint32, false, 65538},
		{[]uint16{0x0002, 0x0001}, Uint32, true, 65538},
		{[]uint16{uint16(f >> 16), uint16(f)}, Float32, false, 21.5},
		{[]uint16{uint16(f), uint16(f >> 16)}, Float32, true, 21.5},
	}
	for _, tt := range tests {
		got, err := Value(tt.regs, tt.typ, tt.lowFirst)
		if err != nil || got != tt.want {
			t.Errorf("Value(%04x, %s, lowFirst=%v) = %v, %v; want %v", tt.regs, tt.typ, tt.lowFirst, got, err, tt.want)
		}
	}
	if _, err := Value([]uint16{1}, Float32, false); err == nil {
		t.Error("Value with one register for float32: want an error")
	}
}

func TestGap(t *testing.T) {
	// 3.5 characters of 11 bits at 9600 baud: 3.5·11/9600 s ≈ 4.01 ms.
	if got, want := Gap(9600, 11), 4010416*time.Nanosecond; got != want {
		t.Errorf("Gap(9600, 11) = %v, want %v", got, want)
	}
	if got := Gap(115200, 11); got != 1750*time.Microsecond {
		t.Errorf("Gap(115200, 11) = %v, want the fixed 1.75ms", got)
	}
}

// fakePort answers each request with the next scripted reply (nil: no answer).
type fakePort struct {
	mu       sync.Mutex
	replies  [][]byte
	in       []byte // bytes waiting to be read
	requests [][]byte
	resets   int
}

func (p *fakePort) Write(b []byte) (int, error) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.requests = append(p.requests, bytes.Clone(b))
	if len(p.replies) > 0 {
		p.in = append(p.in, p.replies[0]...)
		p.replies = p.replies[1:]
	}
	return len(b), nil
}

func (p *fakePort) Read(b []byte) (int, error) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if len(p.in) == 0 {
		return 0, nil // a timed-out read
	}
	n := copy(b, p.in[:min(len(p.in), 2)]) // dribble, as a slow line does
	p.in = p.in[n:]
	return n, nil
}

func (p *fakePort) SetReadTimeout(time.Duration) error { return nil }
func (p *fakePort) ResetInputBuffer() error {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.in = nil
	p.resets++
	return nil
}

// TestClientResync: a garbled reply, then an exception, then no reply, then a good
// one; every failure flushes, and the good reply is read correctly.
func TestClientResync(t *testing.T) {
	good := response(7, 4, 100, 200)
	garbled := append(bytes.Clone(good[:4]), 0xEE, 0xEE, 0xEE, 0xEE, 0xEE)
	p := &fakePort{replies: [][]byte{garbled, appendCRC([]byte{7, 0x84, 2}), nil, good}}
	c := NewClient(p, 115200, 11)
	c.Timeout = 30 * time.Millisecond
	var ex *ExceptionError
	wantErrs := []func(error) bool{
		func(err error) bool { return errors.Is(err, ErrCRC) || errors.Is(err, ErrFrame) },
		func(err error) bool { return errors.As(err, &ex) && ex.Code == 2 },
		func(err error) bool { return errors.Is(err, ErrTimeout) },
	}
	for i, ok := range wantErrs {
		_, err := c.ReadRegisters(7, ReadInputRegisters, 10, 2)
		if err == nil || !ok(err) || !IsTransient(err) {
			t.Fatalf("request %d: err = %v", i, err)
		}
	}
	regs, err := c.ReadRegisters(7, ReadInputRegisters, 10, 2)
	if err != nil || !equal(regs, []uint16{100, 200}) {
		t.Fatalf("after resync: %v, %v; want [100 200]", regs, err)
	}
	if p.resets != 3 {
		t.Errorf("input flushed %d times, want 3 (once per failure)", p.resets)
	}
	if want := ReadRequest(7, 4, 10, 2); !bytes.Equal(p.requests[3], want) {
		t.Errorf("request = % x, want % x", p.requests[3], want)
	}
}

// FuzzDecodeResponse checks that no frame panics the decoder and that only a frame
// with a good CRC and the asked register count is accepted. Seeds:
// testdata/daq/modbus-frames.txt (hex; a frame of two or more bytes also gets its CRC).
func FuzzDecodeResponse(f *testing.F) {
	data, err := os.ReadFile(filepath.Join("..", "..", "testdata", "daq", "modbus-frames.txt"))
	if err != nil {
		f.Fatal(err)
	}
	for _, line := range strings.Split(string(data), "\n") {
		if strings.HasPrefix(line, "#") {
			continue
		}
		b, err := hex.DecodeString(strings.ReplaceAll(line, " ", ""))
		if err != nil {
			f.Fatalf("modbus-frames.txt: %q: %v", line, err)
		}
		f.Add(b, uint16(3))
		if len(b) >= 2 {
			f.Add(appendCRC(b), uint16(3))
		}
	}
	f.Fuzz(func(t *testing.T, frame []byte, count uint16) {
		regs, err := DecodeResponse(frame, 1, 3, count)
		if err == nil && (len(regs) != int(count) || !checkCRC(frame)) {
			t.Fatalf("accepted % x as %d registers %v", frame, count, regs)
		}
		if n, ok := ResponseLength(frame); ok && n < 5 {
			t.Fatalf("ResponseLength = %d < 5", n)
		}
	})
}

func BenchmarkCRC(b *testing.B) {
	frame := response(1, 3, make([]uint16, MaxRegisters)...) // the longest read response
	b.SetBytes(int64(len(frame)))
	for b.Loop() {
		_ = CRC(frame)
	}
}
