package config

import (
	"slices"
	"strings"
	"testing"
	"time"
	"unicode"

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

// TestExampleKnowsEveryFormat: the example is written by hand, so it is held against
// the drivers' registry here: its format comment names every registered format (a new
// driver must be mentioned there) and nothing else, and its own logger's format and
// the default format are registered ones.
func TestExampleKnowsEveryFormat(t *testing.T) {
	var comment string
	for _, line := range strings.Split(Example, "\n") {
		if _, rest, ok := strings.Cut(line, "format: "); ok && strings.Contains(rest, "#") {
			comment = rest[strings.Index(rest, "#")+1:]
			break
		}
	}
	if comment == "" {
		t.Fatal("example.yaml has no commented format: line")
	}
	var named []string
	for _, word := range strings.FieldsFunc(comment, func(r rune) bool { return !unicode.IsLetter(r) }) {
		if slices.Contains(daq.Formats(), word) {
			named = append(named, word)
		}
	}
	slices.Sort(named)
	named = slices.Compact(named)
	if want := daq.Formats(); !slices.Equal(named, want) {
		t.Errorf("example format comment %q names %v, want every registered format %v", comment, named, want)
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
	if !strings.Contains(comment, daq.DefaultFormat+" (") || !strings.Contains(comment, "default") {
		t.Errorf("example format comment %q does not mark %s as the default", comment, daq.DefaultFormat)
	}
}
