package daq

import (
	"reflect"
	"slices"
	"testing"
)

// TestSectionPerFormat: every registered format has its section in Logger (a field
// tagged with the format's name, which config decodes and Check is given), and every
// section-like field of Logger (one of a struct type of its own other than Open)
// belongs to a registered format. A driver registered without its section line, or a
// section left behind by a removed driver, fails here.
func TestSectionPerFormat(t *testing.T) {
	lt := reflect.TypeFor[Logger]()
	var sections []string
	for i := range lt.NumField() {
		f := lt.Field(i)
		if f.Type.Kind() == reflect.Struct && f.Name != "Open" {
			sections = append(sections, f.Tag.Get("mapstructure"))
		}
	}
	slices.Sort(sections)
	if got := Formats(); !slices.Equal(got, sections) {
		t.Errorf("registered formats %v, Logger sections %v: want the same", got, sections)
	}
	if DefaultFormat != "line" || !slices.Contains(Formats(), DefaultFormat) {
		t.Errorf("DefaultFormat %q is not a registered format", DefaultFormat)
	}
}

// TestRegisterRefusesDuplicatesAndGaps: a second driver for a taken name, or one without
// its source or section, is a programming error found at start-up.
func TestRegisterRefusesDuplicatesAndGaps(t *testing.T) {
	line := drivers["line"]
	for _, c := range []struct {
		name, format string
		d            Driver
	}{
		{"taken", "line", line},
		{"no New", "csv", Driver{Section: line.Section}},
		{"no Section", "csv", Driver{New: line.New}},
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: Register(%q) did not panic", c.name, c.format)
				}
			}()
			Register(c.format, c.d)
		}()
	}
	if _, ok := drivers["csv"]; ok {
		t.Error("a refused driver was registered")
	}
}
