package daq

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"slices"
	"time"

	"go.bug.st/serial"

	"github.com/settle-lab/settle/daq/modbus"
)

// ModbusSource polls a Modbus RTU device (config format "modbus") with functions 03
// and 04 and turns its registers into Readings. Contiguous registers of one function
// are read in one request. A failed request (timeout, CRC, exception) is counted and
// its channels give no reading in that poll; the port stays open. It implements
// Source and StatsReporter.
type ModbusSource struct {
	name     string
	slave    byte
	timeout  time.Duration
	bits     int // bits per character, for the 3.5-character gap
	blocks   []modbusBlock
	channels []string
	conv     *conversion
	port     pollPort
	status   *portStatus
}

var (
	_ Source        = (*ModbusSource)(nil)
	_ StatsReporter = (*ModbusSource)(nil)
)

// modbusBlock is one request: count registers from addr with function fn.
type modbusBlock struct {
	fn    byte
	addr  int
	count int
	regs  []modbusReg
}

// modbusReg is one configured value inside a block.
type modbusReg struct {
	pos      int // batch position (index into channels)
	offset   int // first register, relative to the block
	typ      modbus.Type
	lowFirst bool
	scale    float64
	add      float64
}

// NewModbusSource checks cfg and returns a source for it; nothing is opened until
// Run. A nil log discards log output.
func NewModbusSource(cfg Logger, log *slog.Logger) (*ModbusSource, error) {
	baud, err := checkPort(cfg.Name, cfg.Port, cfg.Baud)
	if err != nil {
		return nil, err
	}
	m := cfg.Modbus
	if m.Slave < 1 || m.Slave > 247 {
		return nil, fmt.Errorf("logger %q: modbus.slave %d: must be 1–247", cfg.Name, m.Slave)
	}
	s := &ModbusSource{name: cfg.Name, slave: byte(m.Slave), timeout: orDefault(m.Timeout, DefaultModbusTimeout)}
	if err := s.plan(cfg); err != nil {
		return nil, err
	}
	if s.conv, err = newConversion(cfg, s.channels); err != nil {
		return nil, err
	}
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	stop := serial.OneStopBit
	if m.StopBits == 2 {
		stop = serial.TwoStopBits
	}
	letter := cmp.Or(m.Parity, DefaultParity)
	s.bits = 10 + min(1, int(parity(letter))) + int(max(m.StopBits, 1)) - 1 // start, 8 data, parity?, stop(s)
	s.status = &portStatus{s: PortStats{Logger: cfg.Name, Port: cfg.Port}}
	s.port = pollPort{
		path: cfg.Port, mode: serial.Mode{BaudRate: baud, DataBits: 8, Parity: parity(letter), StopBits: stop},
		interval: orDefault(m.Interval, DefaultPollInterval), open: openSerial, status: s.status, log: log,
	}
	return s, nil
}

// plan turns the register list into channels and requests.
func (s *ModbusSource) plan(cfg Logger) error {
	type item struct {
		fn   byte
		addr int
		reg  modbusReg
	}
	var items []item
	for i, r := range cfg.Modbus.Registers {
		key := fmt.Sprintf("logger %q: modbus.registers[%d]", cfg.Name, i)
		typ := modbus.Type(cmp.Or(r.Type, "int16"))
		fn := byte(cmp.Or(r.Function, 3))
		switch {
		case r.Channel == "":
			return fmt.Errorf("%s.channel: must not be empty", key)
		case typ.Words() == 0:
			return fmt.Errorf("%s.type %q: unknown", key, r.Type)
		case fn != modbus.ReadHoldingRegisters && fn != modbus.ReadInputRegisters:
			return fmt.Errorf("%s.function %d: want 3 or 4", key, r.Function)
		case r.Address < 0 || r.Address+typ.Words() > 0x10000:
			return fmt.Errorf("%s.address %d: out of range", key, r.Address)
		case slices.Contains(s.channels, r.Channel):
			return fmt.Errorf("%s.channel %q: appears twice", key, r.Channel)
		}
		scale := r.Scale
		if scale == 0 {
			scale = 1
		}
		s.channels = append(s.channels, r.Channel)
		items = append(items, item{fn, r.Address, modbusReg{pos: i, typ: typ, lowFirst: r.WordOrder == "low_first", scale: scale, add: r.Offset}})
	}
	if len(items) == 0 {
		return fmt.Errorf("logger %q: modbus.registers: at least one register is needed", cfg.Name)
	}
	slices.SortStableFunc(items, func(a, b item) int {
		return cmp.Or(cmp.Compare(a.fn, b.fn), cmp.Compare(a.addr, b.addr))
	})
	for _, it := range items {
		end := it.addr + it.reg.typ.Words()
		if n := len(s.blocks); n > 0 {
			b := &s.blocks[n-1]
			if b.fn == it.fn && it.addr <= b.addr+b.count && end-b.addr <= modbus.MaxRegisters {
				it.reg.offset = it.addr - b.addr
				b.count = max(b.count, end-b.addr)
				b.regs = append(b.regs, it.reg)
				continue
			}
		}
		s.blocks = append(s.blocks, modbusBlock{fn: it.fn, addr: it.addr, count: end - it.addr, regs: []modbusReg{it.reg}})
	}
	return nil
}

// Name returns the logger name.
func (s *ModbusSource) Name() string { return s.name }

// Stats returns a snapshot of the port counters; it is safe for concurrent use.
// Timeouts count as read errors, CRC, framing and exception replies as parse errors.
func (s *ModbusSource) Stats() PortStats { return s.status.snapshot() }

// Run polls until ctx ends, sending one Reading per register that answered. It
// returns ctx.Err().
func (s *ModbusSource) Run(ctx context.Context, out chan<- Reading) error {
	batch := make([]Reading, len(s.channels))
	got := make([]bool, len(s.channels))
	return s.port.Run(ctx, func(ctx context.Context, port serial.Port) error {
		client := modbus.NewClient(port, s.port.mode.BaudRate, s.bits)
		client.Timeout = s.timeout
		return s.poll(ctx, client, batch, got, out)
	})
}

// poll reads every block once and sends the readings of the blocks that answered.
func (s *ModbusSource) poll(ctx context.Context, c *modbus.Client, batch []Reading, got []bool, out chan<- Reading) error {
	clear(got)
	for i := range batch { // a register that does not answer cannot be a cold junction
		batch[i].Status, batch[i].Raw = StatusUnparsable, "no response"
	}
	var failed error
	for _, b := range s.blocks {
		regs, err := c.ReadRegisters(s.slave, b.fn, uint16(b.addr), uint16(b.count))
		if err != nil && !modbus.IsTransient(err) {
			return err // the port itself failed
		}
		if err != nil {
			s.countFailure(err)
			failed = errors.Join(failed, err)
			continue
		}
		now := time.Now()
		for _, r := range b.regs {
			s.setRegister(&batch[r.pos], regs[r.offset:], r, now)
			got[r.pos] = true
		}
	}
	s.conv.apply(batch)
	if err := s.send(ctx, batch, got, out); err != nil {
		return nil // ctx ended
	}
	if failed != nil {
		return fmt.Errorf("%w: %w", errTransient, failed)
	}
	return nil
}

func (s *ModbusSource) countFailure(err error) {
	if errors.Is(err, modbus.ErrTimeout) {
		s.status.readError()
		return
	}
	s.status.parseErrors(1)
}

// setRegister decodes one value into r.
func (s *ModbusSource) setRegister(r *Reading, regs []uint16, reg modbusReg, now time.Time) {
	*r = Reading{Logger: s.name, Channel: s.channels[reg.pos], Time: now}
	raw, err := modbus.Value(regs, reg.typ, reg.lowFirst)
	v := raw*reg.scale + reg.add
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		r.Status, r.Raw = StatusUnparsable, fmtFloat(raw)
		return
	}
	s.conv.setRaw(r, v, nil)
	if !r.OK() {
		r.Raw = fmtFloat(v)
	}
}

// send sends the readings marked in got; it returns ctx.Err() if ctx ends first.
func (s *ModbusSource) send(ctx context.Context, batch []Reading, got []bool, out chan<- Reading) error {
	sent := false
	for i, r := range batch {
		if !got[i] {
			continue
		}
		select {
		case out <- r:
			sent = true
		case <-ctx.Done():
			return ctx.Err()
		}
	}
	if sent {
		s.status.lastReading(time.Now())
	}
	return nil
}
