package daq

import (
	"bytes"
	"fmt"
	"strconv"

	"github.com/settle-lab/settle/daq/thermocouple"
)

// The units a channel's value may arrive in.
const (
	unitC byte = iota
	unitF
	unitK
	unitMV
)

// input is how one position of a batch (one line, one reply, one poll) becomes °C.
type input struct {
	unit    byte
	tc      thermocouple.Type
	cjIndex int     // batch position of the cold-junction channel, or -1
	cjFixed float64 // cold-junction °C when cjIndex < 0
}

// conversion turns a logger's raw values into Readings in °C: open-circuit markers and
// rails first (on the value as sent), then units and thermocouple EMF per channel. It
// holds no state that changes, so one conversion may serve one driver goroutine.
type conversion struct {
	markers  [][]byte // upper case
	above    float64
	below    float64
	hasAbove bool
	hasBelow bool
	ins      []input // per batch position
	anyUnit  bool    // some position is not °C
}

// newConversion builds the conversion of cfg for batches whose positions read the
// given channels, in order. Errors name the logger and the key.
func newConversion(cfg Logger, channels []string) (*conversion, error) {
	c := &conversion{ins: make([]input, len(channels))}
	for i := range c.ins {
		c.ins[i].cjIndex = -1
	}
	for _, m := range cfg.Open.Markers {
		c.markers = append(c.markers, bytes.ToUpper(bytes.TrimSpace([]byte(m))))
	}
	if cfg.Open.AtOrAbove != nil {
		c.above, c.hasAbove = *cfg.Open.AtOrAbove, true
	}
	if cfg.Open.AtOrBelow != nil {
		c.below, c.hasBelow = *cfg.Open.AtOrBelow, true
	}
	pos := map[string]int{}
	for i, ch := range channels {
		pos[ch] = i
	}
	for i, in := range cfg.Inputs {
		p, ok := pos[in.Channel]
		if !ok {
			return nil, fmt.Errorf("logger %q: inputs[%d].channel %q: not read by this logger", cfg.Name, i, in.Channel)
		}
		conv, err := makeInput(in, pos)
		if err != nil {
			return nil, fmt.Errorf("logger %q: inputs[%d]: %w", cfg.Name, i, err)
		}
		c.ins[p] = conv
		c.anyUnit = c.anyUnit || conv.unit != unitC
	}
	return c, nil
}

func makeInput(in Input, pos map[string]int) (input, error) {
	out := input{cjIndex: -1}
	switch in.Unit {
	case "", "C":
		return out, nil
	case "F":
		out.unit = unitF
		return out, nil
	case "K":
		out.unit = unitK
		return out, nil
	case "mV":
		out.unit = unitMV
	default:
		return out, fmt.Errorf("unit %q: want C, F, K or mV", in.Unit)
	}
	tc, err := thermocouple.ParseType(in.Thermocouple)
	if err != nil {
		return out, fmt.Errorf("thermocouple %q: %w", in.Thermocouple, err)
	}
	out.tc = tc
	if in.ColdJunction != "" {
		p, ok := pos[in.ColdJunction]
		if !ok || in.ColdJunction == in.Channel {
			return out, fmt.Errorf("cold_junction %q: not another channel of this logger", in.ColdJunction)
		}
		out.cjIndex = p
	} else if in.ColdJunctionCelsius != nil {
		out.cjFixed = *in.ColdJunctionCelsius
	}
	return out, nil
}

// isMarker reports whether an unreadable field is an open-circuit marker word.
func (c *conversion) isMarker(field []byte) bool {
	for _, m := range c.markers {
		if len(m) == len(field) && bytes.EqualFold(m, field) {
			return true
		}
	}
	return false
}

// setRaw records a value as sent: ok with the value, or open at a rail. field is kept
// in Raw for a fault.
func (c *conversion) setRaw(r *Reading, v float64, field []byte) {
	if (c.hasAbove && v >= c.above) || (c.hasBelow && v <= c.below) {
		r.Status = StatusOpen
		r.Raw = string(field)
		return
	}
	r.Celsius = v
	r.Status = StatusOK
}

// setUnreadable records a field that is not a number: a marker word is open circuit,
// anything else unparsable.
func (c *conversion) setUnreadable(r *Reading, field []byte) {
	r.Status = StatusUnparsable
	if c.isMarker(field) {
		r.Status = StatusOpen
	}
	r.Raw = string(field)
}

// apply converts the OK readings of one batch (positions as at construction) to °C:
// first plain units, then thermocouple EMF, whose cold junction may be another
// position of the same batch.
func (c *conversion) apply(batch []Reading) {
	if !c.anyUnit {
		return
	}
	for i := range batch {
		r := &batch[i]
		if !r.OK() {
			continue
		}
		switch c.ins[i].unit {
		case unitF:
			r.Celsius = (r.Celsius - 32) * 5 / 9
		case unitK:
			r.Celsius -= 273.15 // 0 °C = 273.15 K (SI definition; from memory)
		}
	}
	for i := range batch {
		if c.ins[i].unit == unitMV && batch[i].OK() {
			c.thermocouple(batch, i)
		}
	}
}

// thermocouple converts the EMF at position i with cold-junction compensation.
func (c *conversion) thermocouple(batch []Reading, i int) {
	in, r := c.ins[i], &batch[i]
	cj := in.cjFixed
	if in.cjIndex >= 0 {
		ref := batch[in.cjIndex]
		if !ref.OK() {
			r.Status = StatusRange
			r.Raw = fmt.Sprintf("%s mV (cold junction %s: %s)", fmtFloat(r.Celsius), ref.Channel, ref.Status)
			return
		}
		cj = ref.Celsius
	}
	t, err := thermocouple.Compensated(in.tc, r.Celsius, cj)
	if err != nil {
		r.Status = StatusRange
		r.Raw = fmtFloat(r.Celsius) + " mV"
		return
	}
	r.Celsius = t
}

func fmtFloat(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
