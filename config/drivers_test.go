package config

import (
	"path/filepath"
	"testing"
	"time"
)

// TestGoodDrivers loads a file with every logger format and checks the new sections
// decode as written.
func TestGoodDrivers(t *testing.T) {
	clearEnv(t)
	c, err := Load(filepath.Join(testdataDir, "good", "drivers.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Loggers) != 3 {
		t.Fatalf("%d loggers, want 3", len(c.Loggers))
	}
	line, query, modbus := c.Loggers[0], c.Loggers[1], c.Loggers[2]
	if line.Format != "line" || !line.Line.DecimalComma || line.Line.ClockFormat != "2006-01-02T15:04:05" ||
		line.Open.AtOrAbove == nil || *line.Open.AtOrAbove != 9999 || line.Clean.StuckCount != 30 {
		t.Errorf("line logger = %+v", line)
	}
	if query.Query.Command != "MEAS:TEMP? (@101:103)\n" || query.Query.Timeout != 500*time.Millisecond ||
		len(query.Inputs) != 2 || query.Inputs[0].ColdJunction != "cj" || *query.Inputs[1].ColdJunctionCelsius != 23 {
		t.Errorf("query logger = %+v", query)
	}
	r := modbus.Modbus.Registers
	if modbus.Modbus.Slave != 3 || len(r) != 2 || r[0].Scale != 0.1 || r[1].Function != 4 || r[1].WordOrder != "low_first" {
		t.Errorf("modbus logger = %+v", modbus)
	}
}
