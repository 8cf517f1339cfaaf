package config

import (
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// Every worked example in the example configuration's clock_format table reads its
// sample timestamp (so the comments stay true).
func TestExampleClockFormats(t *testing.T) {
	n := 0
	for _, line := range strings.Split(Example, "\n") {
		line = strings.TrimSpace(strings.TrimPrefix(strings.TrimSpace(line), "#"))
		q := strings.Index(line, `"%`)
		if q < 0 || !strings.HasPrefix(line, "20") && !strings.HasPrefix(line, "0") && !strings.HasPrefix(line, "1") {
			continue
		}
		value := strings.TrimSpace(line[:q])
		format := line[q+1:]
		format = format[:strings.Index(format, `"`)]
		layout, err := daq.ClockFormatLayout(format)
		if err != nil {
			t.Errorf("example %q: %v", format, err)
			continue
		}
		if _, err := time.Parse(layout, value); err != nil {
			t.Errorf("example %q cannot read its sample %q: %v", format, value, err)
		}
		n++
	}
	if n != 6 {
		t.Errorf("checked %d worked examples, want the 6 of example.yaml", n)
	}
}

// TestExampleFormatsAreRegistered: the example is written by hand, so it is held
// against the drivers' registry here: every format its format comment offers ("line
// (text lines, default), query (…) or modbus (…)") and its logger's format are
// registered, and the one it marks as the default is daq.DefaultFormat. A renamed or
// removed driver fails here; a new one need not be added to the example.
func TestExampleFormatsAreRegistered(t *testing.T) {
	var comment string
	for _, line := range strings.Split(Example, "\n") {
		if _, rest, ok := strings.Cut(line, "format: "); ok && strings.Contains(rest, "#") {
			comment = rest[strings.Index(rest, "#")+1:]
			break
		}
	}
	offered := exampleFormat.FindAllStringSubmatch(comment, -1)
	if len(offered) < 2 {
		t.Fatalf("example.yaml format comment %q offers %d formats, want the choice spelled out", comment, len(offered))
	}
	for _, m := range offered {
		if !slices.Contains(daq.Formats(), m[1]) {
			t.Errorf("example format comment offers %q, not a registered format (%v)", m[1], daq.Formats())
		}
		if strings.Contains(m[2], "default") != (m[1] == daq.DefaultFormat) {
			t.Errorf("example format comment: %s (%s), but the default format is %s", m[1], m[2], daq.DefaultFormat)
		}
	}
	c, err := Parse("example.yaml", []byte(Example))
	if err != nil {
		t.Fatal(err)
	}
	for _, l := range c.Loggers {
		if !slices.Contains(daq.Formats(), l.Format) {
			t.Errorf("example logger %s: format %q is not registered", l.Name, l.Format)
		}
	}
}

// exampleFormat matches one offered format of the example's comment: "query (SCPI-style)".
var exampleFormat = regexp.MustCompile(`(\w+) \(([^)]*)\)`)
