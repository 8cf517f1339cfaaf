package daq_test

import (
	"errors"
	"path/filepath"
	"testing"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
)

// TestNewSourceEveryFormat: what config accepts, the drivers accept, each with its
// counters (testdata/config/good/drivers.yaml has one logger of each format).
func TestNewSourceEveryFormat(t *testing.T) {
	c, err := config.Load(filepath.Join("..", "testdata", "config", "good", "drivers.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	formats := map[string]bool{}
	for _, l := range c.Loggers {
		src, err := daq.NewSource(l.Logger, nil)
		if err != nil {
			t.Errorf("NewSource(%s): %v", l.Name, err)
			continue
		}
		if _, ok := src.(daq.StatsReporter); !ok || src.Name() != l.Name {
			t.Errorf("%s: source %T lacks Stats or has name %q", l.Name, src, src.Name())
		}
		formats[l.Format] = true
	}
	if len(formats) != 3 {
		t.Errorf("formats covered: %v, want line, query and modbus", formats)
	}
	if _, err := daq.NewSource(daq.Logger{Name: "x", Format: "csv"}, nil); !errors.Is(err, daq.ErrUnknownFormat) {
		t.Errorf("unknown format: err = %v", err)
	}
}
