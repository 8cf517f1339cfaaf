package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"go.bug.st/serial/enumerator"
)

func TestPortsByIDLinks(t *testing.T) {
	dir := t.TempDir()
	dev := filepath.Join(dir, "ttyUSB7")
	if err := os.WriteFile(dev, nil, 0o600); err != nil {
		t.Fatal(err)
	}
	byID := filepath.Join(dir, "by-id")
	if err := os.Mkdir(byID, 0o755); err != nil {
		t.Fatal(err)
	}
	link := filepath.Join(byID, "usb-Example_Rack_Adapter_R2D2-if00-port0")
	if err := os.Symlink("../ttyUSB7", link); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink("../gone", filepath.Join(byID, "usb-unplugged")); err != nil {
		t.Fatal(err)
	}
	got, err := byIDLinks(byID)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 1 || len(got[dev]) != 1 || got[dev][0] != link {
		t.Errorf("byIDLinks = %v, want %s -> [%s] (dangling link skipped)", got, dev, link)
	}
	if none, err := byIDLinks(filepath.Join(dir, "absent")); err != nil || len(none) != 0 {
		t.Errorf("missing by-id dir: %v, %v; want an empty map", none, err)
	}
}

func TestPortsTable(t *testing.T) {
	ports := []*enumerator.PortDetails{
		{Name: "/dev/ttyUSB1", IsUSB: true, VID: "0403", PID: "6001", SerialNumber: "R2D2", Manufacturer: "Example", Product: "Rack Adapter"},
		{Name: "/dev/ttyS0"},
		{Name: "/dev/ttyACM0", IsUSB: true, VID: "2E8A", PID: "000A"},
	}
	links := map[string][]string{"/dev/ttyUSB1": {"/dev/serial/by-id/usb-Example_Rack_Adapter_R2D2-if00-port0"}}
	var b bytes.Buffer
	if err := writePorts(&b, ports, links); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(b.String()), "\n")
	want := [][]string{
		{"PORT", "USB", "ID", "SERIAL", "PRODUCT", "STABLE", "PATH"},
		{"/dev/ttyACM0", "2e8a:000a", "-", "-", "(no", "by-id", "link;", "is", "udev", "running?)"},
		{"/dev/ttyS0", "-", "-", "-", "-"},
		{"/dev/ttyUSB1", "0403:6001", "R2D2", "Example", "Rack", "Adapter", "/dev/serial/by-id/usb-Example_Rack_Adapter_R2D2-if00-port0"},
	}
	if len(lines) != len(want) {
		t.Fatalf("output:\n%s\nwant %d lines", b.String(), len(want))
	}
	for i, w := range want {
		if got := strings.Fields(lines[i]); strings.Join(got, " ") != strings.Join(w, " ") {
			t.Errorf("line %d = %q, want fields %q", i, lines[i], w)
		}
	}
	b.Reset()
	if err := writePorts(&b, nil, nil); err != nil || b.String() != "no serial ports found\n" {
		t.Errorf("no ports: %q, %v", b.String(), err)
	}
}
