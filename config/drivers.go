package config

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"regexp"
	"strings"
	"time"

	"github.com/settle-lab/settle/daq/thermocouple"
)

// Formats are the logger formats the drivers read.
var Formats = []string{"line", "modbus", "query"}

// Defaults of the query and modbus sections, used where a key is absent (zero).
const (
	// DefaultPollInterval is the time between queries or polls.
	DefaultPollInterval = time.Second
	// DefaultQueryTimeout bounds the wait for one query reply.
	DefaultQueryTimeout = time.Second
	// DefaultModbusTimeout bounds one Modbus request and response.
	DefaultModbusTimeout = 500 * time.Millisecond
	// DefaultTerminator ends a query reply.
	DefaultTerminator = "\n"
	// DefaultParity is the Modbus serial-line default, even parity (Modbus over
	// Serial Line Specification V1.02, section 2.5.1; from memory).
	DefaultParity = "E"
)

// Units a channel's values may arrive in (Input.Unit).
var Units = []string{"C", "F", "K", "mV"}

// RegisterTypes are the Modbus register value types (Register.Type).
var RegisterTypes = []string{"int16", "uint16", "int32", "uint32", "float32"}

// namedLayouts are the clock formats with a name, lower case; "" and "seconds" are the
// relative clock and "unix" seconds since 1970, which have no layout.
var namedLayouts = map[string]string{
	"rfc3339":     time.RFC3339,
	"rfc3339nano": time.RFC3339Nano,
	"datetime":    time.DateTime,
}

// ClockLayout returns the Go time layout for a clock_format. It returns "" and true
// for the number formats ("", "seconds", "unix"), the layout and true for a named
// format, a strftime-style format (with '%') or a Go layout with at least a date or
// time element, and false otherwise. ClockFormatLayout says why a format is refused.
func ClockLayout(format string) (string, bool) {
	layout, err := ClockFormatLayout(format)
	return layout, err == nil
}

// ClockFormatLayout is ClockLayout with the reason a format is refused: for a
// strftime-style format, the token or text that cannot be converted.
func ClockFormatLayout(format string) (string, error) {
	switch lower := strings.ToLower(format); lower {
	case "", "seconds", "unix":
		return "", nil
	default:
		if l, ok := namedLayouts[lower]; ok {
			return l, nil
		}
	}
	layout := format
	if strings.Contains(format, "%") {
		l, err := StrftimeLayout(format)
		if err != nil {
			return "", err
		}
		layout = l
	} else {
		// A layout must change when a time is formatted with it, and read back.
		ref := time.Date(2009, 11, 10, 23, 0, 1, 0, time.UTC)
		s := ref.Format(format)
		if s == format {
			return "", errNotClockFormat
		}
		if _, err := time.Parse(format, s); err != nil {
			return "", errNotClockFormat
		}
	}
	if err := completeLayout(format, layout); err != nil {
		return "", err
	}
	return utcSuffix(layout), nil
}

// completeLayout refuses a layout that cannot place a reading in time: without a year,
// month, day, hour or minute every reading would get a made-up date (year 0) or lose
// its hour, and nothing downstream could tell.
func completeLayout(format, layout string) error {
	ref := time.Date(2026, 3, 14, 14, 5, 9, 0, time.UTC)
	var missing []string
	for _, c := range []struct {
		what string
		t    time.Time
	}{
		{"the year", ref.AddDate(1, 0, 0)}, {"the month", ref.AddDate(0, 1, 0)}, {"the day", ref.AddDate(0, 0, 1)},
		{"the hour", ref.Add(time.Hour)}, {"the minutes", ref.Add(time.Minute)},
	} {
		if ref.Format(layout) == c.t.Format(layout) {
			missing = append(missing, c.what)
		}
	}
	if len(missing) == 0 {
		return nil
	}
	return fmt.Errorf("%q leaves out %s: every reading would get a made-up date or time; give the logger's full date and time, or leave clock_column out (settle then stamps each line as it arrives)",
		format, strings.Join(missing, ", "))
}

// utcSuffix makes a layout that ends in the literal text Z, UTC or GMT (a logger that
// writes its clock in UTC and says so) read its times as UTC: as plain text the time
// would be taken as the host's local time, off by the host's UTC offset.
func utcSuffix(layout string) string {
	switch {
	case strings.HasSuffix(layout, "Z"):
		return layout[:len(layout)-1] + "Z07:00"
	case strings.HasSuffix(layout, "UTC"), strings.HasSuffix(layout, "GMT"):
		return layout[:len(layout)-3] + "MST"
	}
	return layout
}

var errNotClockFormat = errors.New(`want seconds, unix, rfc3339, a strftime-style format such as "%Y-%m-%d %H:%M:%S" or a Go time layout such as "2006-01-02 15:04:05"`)

// lineFields describes the fields a line format yields.
type lineFields struct {
	groups     int            // capture groups of the regexp (0 without one)
	named      []string       // channel names given by named groups
	namedIndex map[int]string // group index → name, for named groups
}

// checkLineSplit checks separator, regexp and decimal_comma.
func checkLineSplit(k *checker, key string, lf LineFormat) lineFields {
	if lf.Regexp == "" {
		if lf.Separator == "" {
			k.add(key+".separator", "must not be empty")
		}
		if lf.DecimalComma && lf.Separator == "," {
			k.add(key+".decimal_comma", `needs a separator other than ","; set separator (e.g. ";")`)
		}
		return lineFields{}
	}
	re, err := regexp.Compile(lf.Regexp)
	if err != nil {
		k.add(key+".regexp", "%v", err)
		return lineFields{}
	}
	f := lineFields{groups: re.NumSubexp(), namedIndex: map[int]string{}}
	if f.groups == 0 {
		k.add(key+".regexp", "has no capture groups; each (…) group is a field")
	}
	for i, name := range re.SubexpNames() {
		if name == "" {
			continue
		}
		f.namedIndex[i] = name
		if name == "clock" {
			if lf.ClockColumn != 0 && lf.ClockColumn != i {
				k.add(key+".clock_column", "is %d but the regexp group \"clock\" is group %d", lf.ClockColumn, i)
			}
			continue
		}
		f.named = append(f.named, name)
	}
	return f
}

func checkQuery(k *checker, key string, q QueryFormat, channels map[string]int, readBy map[string]string, own map[string]bool) {
	if strings.TrimSpace(q.Command) == "" {
		k.add(key+".command", `must not be empty; e.g. "MEAS:TEMP? (@101:104)\n"`)
	}
	checkPoll(k, key, q.Interval, q.Timeout)
	sep, term := cmp.Or(q.Separator, ","), cmp.Or(q.Terminator, DefaultTerminator)
	if strings.Contains(term, sep) {
		k.add(key+".separator", "%q is part of the terminator %q", sep, term)
	}
	if len(q.Columns) == 0 {
		k.add(key+".columns", "at least one column is needed")
	}
	seen := map[int]int{}
	for i, col := range q.Columns {
		colKey := fmt.Sprintf("%s.columns[%d]", key, i)
		if first, dup := seen[col.Index]; col.Index < 1 {
			k.add(colKey+".index", "must be ≥ 1 (values count from 1), got %d", col.Index)
		} else if dup {
			k.add(colKey+".index", "value %d is already mapped by %s.columns[%d]", col.Index, key, first)
		} else {
			seen[col.Index] = i
		}
		checkColumnChannel(k, colKey+".channel", col.Channel, channels, readBy)
		own[col.Channel] = true
	}
}

// checkPoll checks a poll interval and timeout (zero: default).
func checkPoll(k *checker, key string, interval, timeout time.Duration) {
	if interval < 0 {
		k.add(key+".interval", "must not be negative (0 or absent: %s), got %s", DefaultPollInterval, interval)
	}
	if timeout < 0 {
		k.add(key+".timeout", "must not be negative, got %s", timeout)
	}
	if interval > 0 && timeout > interval {
		k.add(key+".timeout", "%s is longer than the interval %s", timeout, interval)
	}
}

func checkModbus(k *checker, key string, m ModbusFormat, channels map[string]int, readBy map[string]string, own map[string]bool) {
	// Modbus Application Protocol V1.1b3, section 4.2 (from memory): 0 is broadcast,
	// 248–255 are reserved; a read needs an individual address.
	if m.Slave < 1 || m.Slave > 247 {
		k.add(key+".slave", "must be a device address 1–247, got %d", m.Slave)
	}
	switch m.Parity {
	case "", "N", "E", "O":
	default:
		k.add(key+".parity", `want "N", "E" or "O", got %q`, m.Parity)
	}
	if m.StopBits != 0 && m.StopBits != 1 && m.StopBits != 2 {
		k.add(key+".stop_bits", "want 1 or 2, got %d", m.StopBits)
	}
	checkPoll(k, key, m.Interval, m.Timeout)
	if len(m.Registers) == 0 {
		k.add(key+".registers", "at least one register is needed")
	}
	for i, r := range m.Registers {
		rKey := fmt.Sprintf("%s.registers[%d]", key, i)
		checkRegister(k, rKey, r)
		checkColumnChannel(k, rKey+".channel", r.Channel, channels, readBy)
		own[r.Channel] = true
	}
}

func checkRegister(k *checker, key string, r Register) {
	if r.Function != 0 && r.Function != 3 && r.Function != 4 {
		k.add(key+".function", "want 3 (holding registers) or 4 (input registers), got %d", r.Function)
	}
	words := 1
	switch r.Type {
	case "", "int16", "uint16":
	case "int32", "uint32", "float32":
		words = 2
	default:
		k.add(key+".type", "want one of %s, got %q", strings.Join(RegisterTypes, ", "), r.Type)
	}
	if r.Address < 0 || r.Address+words > 0x10000 {
		k.add(key+".address", "must be 0–%d for %d register(s), got %d", 0x10000-words, words, r.Address)
	}
	switch r.WordOrder {
	case "", "high_first", "low_first":
	default:
		k.add(key+".word_order", `want "high_first" or "low_first", got %q`, r.WordOrder)
	}
	if math.IsNaN(r.Scale) || math.IsInf(r.Scale, 0) || math.IsNaN(r.Offset) || math.IsInf(r.Offset, 0) {
		k.add(key, "scale and offset must be finite")
	}
}

// checkInputs checks the unit of each channel; own holds the channels this logger reads.
func checkInputs(k *checker, key string, inputs []Input, own map[string]bool) {
	seen := map[string]int{}
	for i, in := range inputs {
		iKey := fmt.Sprintf("%s[%d]", key, i)
		if first, dup := seen[in.Channel]; dup {
			k.add(iKey+".channel", "channel %q already has an input at %s[%d]", in.Channel, key, first)
		} else if !own[in.Channel] {
			k.add(iKey+".channel", "channel %q is not read by this logger", in.Channel)
		}
		seen[in.Channel] = i
		checkInput(k, iKey, in, own)
	}
}

func checkInput(k *checker, key string, in Input, own map[string]bool) {
	switch in.Unit {
	case "", "C", "F", "K":
		if in.Thermocouple != "" || in.ColdJunction != "" || in.ColdJunctionCelsius != nil {
			k.add(key+".unit", "thermocouple and cold junction need unit mV, got %q", in.Unit)
		}
		return
	case "mV":
	default:
		k.add(key+".unit", "want one of %s, got %q", strings.Join(Units, ", "), in.Unit)
		return
	}
	if _, err := thermocouple.ParseType(in.Thermocouple); err != nil {
		k.add(key+".thermocouple", "unit mV needs a thermocouple type (B, E, J, K, N, R, S, T), got %q", in.Thermocouple)
	}
	switch {
	case in.ColdJunction != "" && in.ColdJunctionCelsius != nil:
		k.add(key, "give cold_junction (a channel) or cold_junction_celsius (a fixed value), not both")
	case in.ColdJunction == in.Channel && in.ColdJunction != "":
		k.add(key+".cold_junction", "channel %q cannot be its own cold junction", in.Channel)
	case in.ColdJunction != "" && !own[in.ColdJunction]:
		k.add(key+".cold_junction", "channel %q is not read by this logger", in.ColdJunction)
	case in.ColdJunctionCelsius != nil && !(*in.ColdJunctionCelsius >= -50 && *in.ColdJunctionCelsius <= 150):
		k.add(key+".cold_junction_celsius", "must be between -50 and 150 °C, got %g", *in.ColdJunctionCelsius)
	}
}

func checkOpen(k *checker, key string, o OpenCircuit) {
	for i, m := range o.Markers {
		if strings.TrimSpace(m) == "" {
			k.add(fmt.Sprintf("%s.markers[%d]", key, i), "must not be blank")
		}
	}
	if o.AtOrAbove != nil && o.AtOrBelow != nil && *o.AtOrBelow >= *o.AtOrAbove {
		k.add(key, "at_or_below (%g) must be less than at_or_above (%g)", *o.AtOrBelow, *o.AtOrAbove)
	}
}

func checkCleaning(k *checker, key string, c Cleaning) {
	if c.SpikeWindow < 0 || (c.SpikeWindow > 0 && c.SpikeWindow%2 == 0) || c.SpikeWindow > 101 {
		k.add(key+".spike_window", "must be odd, 1–101 (1: off; absent: 7), got %d", c.SpikeWindow)
	}
	if c.SpikeSigmas < 0 {
		k.add(key+".spike_sigmas", "must not be negative (absent: 3), got %g", c.SpikeSigmas)
	}
	if c.SpikeMinCelsius < 0 {
		k.add(key+".spike_min_celsius", "must not be negative (absent: 0.5), got %g", c.SpikeMinCelsius)
	}
	if c.StuckCount < 0 || c.StuckCount == 1 {
		k.add(key+".stuck_count", "must be 0 (off) or ≥ 2, got %d", c.StuckCount)
	}
	if c.MinCelsius != nil && c.MaxCelsius != nil && *c.MinCelsius >= *c.MaxCelsius {
		k.add(key, "min_celsius (%g) must be less than max_celsius (%g)", *c.MinCelsius, *c.MaxCelsius)
	}
}
