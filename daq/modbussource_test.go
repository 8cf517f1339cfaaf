package daq

import (
	"bufio"
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq/ptytest"
)

// pymodbusModules are the Python modules testdata/daq/modbus_server.py needs (the
// import line in pymodbusPython, which deploy/cipackages_test.go reads, names the
// same), each with the Debian package that provides it.
var pymodbusModules = []struct{ module, pkg string }{
	{"pymodbus", "python3-pymodbus"},
	{"serial_asyncio", "python3-serial-asyncio"}, // only a Recommends of python3-pymodbus
}

// pymodbusPython returns Debian's python3 when it can import every module the Modbus
// server script needs. A missing module skips the test, naming the module and its
// package, except under CI=true, where .ci/run installs them and the test must run.
func pymodbusPython(t *testing.T) string {
	t.Helper()
	const py = "/usr/bin/python3"
	if exec.Command(py, "-c", "import pymodbus, serial_asyncio").Run() == nil {
		return py
	}
	var missing []string // say which module is missing, and its package
	for _, m := range pymodbusModules {
		if out, err := exec.Command(py, "-c", "import "+m.module).CombinedOutput(); err != nil {
			missing = append(missing, fmt.Sprintf("module %s (Debian package %s): %v: %s",
				m.module, m.pkg, err, strings.TrimSpace(lastLine(string(out)))))
		}
	}
	if len(missing) == 0 {
		return py
	}
	msg := py + " cannot import " + strings.Join(missing, "; ")
	if os.Getenv("CI") == "true" {
		t.Fatal(msg)
	}
	t.Skip(msg)
	return ""
}

// lastLine is the last non-empty line of s (a Python traceback's error line).
func lastLine(s string) string {
	lines := strings.Split(strings.TrimSpace(s), "\n")
	return lines[len(lines)-1]
}

// bridgedPTYs returns the device paths of two pseudo-terminals whose master ends are
// joined, so that what one program writes to the first device the other reads from the
// second: a null-modem cable between two programs that each open a device path.
func bridgedPTYs(t *testing.T) (a, b string) {
	pa, pb := ptytest.Open(t), ptytest.Open(t)
	go io.Copy(pa.Master, pb.Master)
	go io.Copy(pb.Master, pa.Master)
	return pa.Path(), pb.Path()
}

// startPymodbus runs testdata/daq/modbus_server.py on device and waits until it says
// ready.
func startPymodbus(t *testing.T, py, device string) {
	t.Helper()
	script := filepath.Join("..", "testdata", "daq", "modbus_server.py")
	cmd := exec.Command(py, script, device)
	cmd.Stderr = &testWriter{t: t}
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatalf("start %s: %v", script, err)
	}
	t.Cleanup(func() {
		_ = cmd.Process.Kill()
		_ = cmd.Wait()
	})
	ready := make(chan string, 1)
	go func() {
		line, _ := bufio.NewReader(stdout).ReadString('\n')
		ready <- line
	}()
	select {
	case line := <-ready:
		if strings.TrimSpace(line) != "ready" {
			t.Fatalf("%s on %s said %q, want ready", script, device, line)
		}
	case <-time.After(20 * time.Second):
		t.Fatalf("%s on %s did not get ready", script, device)
	}
}

// testWriter logs a child's stderr in the test output.
type testWriter struct{ t *testing.T }

func (w *testWriter) Write(p []byte) (int, error) {
	w.t.Logf("pymodbus: %s", strings.TrimSpace(string(p)))
	return len(p), nil
}

// TestModbusAgainstPymodbus reads registers of every type from pymodbus, an
// independent Modbus RTU server implementation, through go.bug.st/serial on a
// pseudo-terminal. The server's values are in testdata/daq/modbus_server.py.
func TestModbusAgainstPymodbus(t *testing.T) {
	py := pymodbusPython(t)
	serverDev, clientDev := bridgedPTYs(t)
	startPymodbus(t, py, serverDev)
	cfg := Logger{
		Name: "module", Port: clientDev, Baud: 19200, Format: "modbus",
		Modbus: ModbusFormat{Slave: 3, Parity: "N", // a pty refuses parity
			Interval: 50 * time.Millisecond, Timeout: 300 * time.Millisecond,
			Registers: []ModbusRegister{
				{Channel: "furnace", Address: 0, Scale: 0.1},
				{Channel: "chiller", Address: 1, Scale: 0.1},
				{Channel: "room", Address: 2, Type: "float32"},
				{Channel: "bath", Address: 4, Type: "int32", WordOrder: "low_first", Scale: 0.001},
				{Channel: "tc", Function: 4, Address: 0, Scale: 0.001},
				{Channel: "broken", Function: 4, Address: 1, Type: "uint16"},
				{Channel: "cj", Function: 4, Address: 2, Scale: 0.1},
				{Channel: "nowhere", Function: 4, Address: 500}, // not served: exception 02
			}},
		Inputs: []Input{{Channel: "tc", Unit: "mV", Thermocouple: "K", ColdJunction: "cj"}},
		Open:   OpenCircuit{AtOrAbove: fptr(32767)},
	}
	src, err := NewSource(cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan Reading, 64)
	go src.Run(ctx, out)

	// Type K: 3.096 mV over a 25 °C cold junction is E = 3.096 + 1.000242 = 4.096242 mV,
	// within 0.0001 mV of E(100 °C) = 4.096230 mV (NIST ITS-90 tables via
	// shared/reference/reference-values.md, K rows): 100 °C within 0.06 °C (NIST's
	// inverse error band).
	want := map[string]float64{"furnace": 215.3, "chiller": -4.5, "room": 21.5, "bath": -123.456, "tc": 100, "cj": 25}
	got := map[string]Reading{}
	for len(got) < len(want)+1 {
		r := nextReading(t, out)
		got[r.Channel] = r
	}
	for ch, w := range want {
		r := got[ch]
		if !r.OK() || math.Abs(r.Celsius-w) > 0.06 {
			t.Errorf("%s = %+v, want %g °C", ch, r, w)
		}
	}
	if r := got["broken"]; r.Status != StatusOpen || r.Raw != "32767" {
		t.Errorf("broken = %+v, want open at the rail 32767", r)
	}
	if _, ok := got["nowhere"]; ok {
		t.Errorf("a register the server refuses gave a reading: %+v", got["nowhere"])
	}
	st := src.(StatsReporter).Stats()
	if !st.Up || st.ParseErrors == 0 || st.LastReading.IsZero() {
		t.Errorf("stats %+v: want up, the refused register counted as a parse error, a last reading", st)
	}
}
