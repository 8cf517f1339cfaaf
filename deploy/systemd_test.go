package deploy

import (
	"bufio"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

const unitPath = "systemd/settle.service"

// unitSettings parses a systemd unit file into "Section.Key" → values, in order (a key
// may repeat, as DeviceAllow= does). Comments and blank lines are skipped.
func unitSettings(t *testing.T, path string) map[string][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatalf("open %s: %v", path, err)
	}
	defer f.Close()
	settings := map[string][]string{}
	section := ""
	sc := bufio.NewScanner(f)
	for n := 1; sc.Scan(); n++ {
		line := strings.TrimSpace(sc.Text())
		switch {
		case line == "" || strings.HasPrefix(line, "#") || strings.HasPrefix(line, ";"):
		case strings.HasPrefix(line, "[") && strings.HasSuffix(line, "]"):
			section = strings.Trim(line, "[]")
		default:
			key, val, ok := strings.Cut(line, "=")
			if !ok {
				t.Fatalf("%s:%d: not a key=value line: %q", path, n, line)
			}
			settings[section+"."+key] = append(settings[section+"."+key], val)
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatalf("read %s: %v", path, err)
	}
	return settings
}

// TestUnitSettings checks the settings the operator's guide and the daemon rely on.
func TestUnitSettings(t *testing.T) {
	s := unitSettings(t, unitPath)
	want := []struct{ key, value string }{
		{"Service.User", "settle"},
		{"Service.SupplementaryGroups", "dialout"},
		{"Service.ExecStart", "/usr/local/bin/settle run --config /etc/settle/settle.yaml"},
		{"Service.ExecReload", "/bin/kill -HUP $MAINPID"},
		{"Service.Restart", "on-failure"},
		{"Service.StateDirectory", "settle"}, // data_dir /var/lib/settle in the examples
		{"Service.ConfigurationDirectory", "settle"},
		{"Service.DevicePolicy", "closed"},
		{"Service.DeviceAllow", "char-ttyUSB rw"},
		{"Service.DeviceAllow", "char-ttyACM rw"},
		{"Service.ProtectSystem", "strict"},
		{"Service.ProtectHome", "yes"},
		{"Service.PrivateTmp", "yes"},
		{"Service.NoNewPrivileges", "yes"},
		{"Service.RestrictAddressFamilies", "AF_INET AF_INET6 AF_UNIX AF_NETLINK"},
		{"Service.LimitNOFILE", "1024"}, // go.bug.st/serial's select() panics on fd >= 1024
		{"Install.WantedBy", "multi-user.target"},
	}
	for _, w := range want {
		if !slices.Contains(s[w.key], w.value) {
			t.Errorf("%s: %s = %q, want it to include %q", unitPath, w.key, s[w.key], w.value)
		}
	}
	for _, key := range []string{"Service.RestartSec", "Service.MemoryMax"} {
		if len(s[key]) == 0 {
			t.Errorf("%s: %s is not set", unitPath, key)
		}
	}
	// PrivateDevices=yes would hide /dev/ttyUSB* and /dev/ttyACM* from the daemon;
	// DynamicUser=yes would move the journal under /var/lib/private (see the unit's header).
	for _, key := range []string{"Service.PrivateDevices", "Service.DynamicUser"} {
		if slices.Contains(s[key], "yes") || slices.Contains(s[key], "true") {
			t.Errorf("%s: %s=yes must not be set", unitPath, key)
		}
	}
}

// testableUnit copies the unit into a temporary directory with ExecStart pointing at an
// executable that exists here, since systemd-analyze rejects a unit whose binary is
// missing and /usr/local/bin/settle is not installed on a build machine.
func testableUnit(t *testing.T) string {
	t.Helper()
	exe, err := exec.LookPath("true")
	if err != nil {
		t.Skipf("no `true` executable to stand in for /usr/local/bin/settle: %v", err)
	}
	unit := readFile(t, unitPath)
	if !strings.Contains(unit, "ExecStart=/usr/local/bin/settle ") {
		t.Fatalf("%s: ExecStart does not start /usr/local/bin/settle", unitPath)
	}
	unit = strings.Replace(unit, "ExecStart=/usr/local/bin/settle ", "ExecStart="+exe+" ", 1)
	path := filepath.Join(t.TempDir(), "settle.service")
	if err := os.WriteFile(path, []byte(unit), 0o644); err != nil {
		t.Fatalf("write %s: %v", path, err)
	}
	return path
}

func TestSystemdAnalyzeVerify(t *testing.T) {
	analyze := optionalTool(t, "systemd-analyze")
	path := testableUnit(t)
	out := run(t, filepath.Dir(path), analyze, "verify", path)
	if strings.TrimSpace(out) != "" {
		t.Errorf("systemd-analyze verify %s: want no warnings, got:\n%s", unitPath, out)
	}
}

// TestSystemdAnalyzeSecurity keeps the unit's hardening from eroding: systemd's own
// exposure score (0 = fully locked down, 10 = unprotected) must stay at or below 2.5
// (the unit scores 1.5 with systemd 252; a stock unit scores 9.6).
func TestSystemdAnalyzeSecurity(t *testing.T) {
	analyze := optionalTool(t, "systemd-analyze")
	path := testableUnit(t)
	cmd := exec.Command(analyze, "security", "--offline=yes", "--threshold=25", "--no-pager", path)
	out, err := cmd.CombinedOutput()
	if err != nil {
		if strings.Contains(string(out), "Unknown option") || strings.Contains(string(out), "unrecognized option") {
			t.Skipf("systemd-analyze too old for security --offline: %s", out)
		}
		t.Fatalf("systemd-analyze security %s: exposure above 2.5 or error: %v\n%s", unitPath, err, out)
	}
}

// TestModulesLoadCoversDeviceAllow checks that every USB serial driver the unit allows by
// name is loaded at boot by settle-modules.conf, so systemd finds its name in
// /proc/devices when the service starts. (ttyS is built into common kernels.)
func TestModulesLoadCoversDeviceAllow(t *testing.T) {
	const modulesPath = "systemd/settle-modules.conf"
	var modules []string
	for line := range strings.Lines(readFile(t, modulesPath)) {
		if line = strings.TrimSpace(line); line != "" && !strings.HasPrefix(line, "#") {
			modules = append(modules, line)
		}
	}
	// Driver name in /proc/devices → kernel module that registers it (Linux drivers
	// usb/serial and usb/class/cdc-acm; from memory).
	needs := map[string]string{"char-ttyUSB rw": "usbserial", "char-ttyACM rw": "cdc_acm"}
	allowed := unitSettings(t, unitPath)["Service.DeviceAllow"]
	for allow, module := range needs {
		if slices.Contains(allowed, allow) && !slices.Contains(modules, module) {
			t.Errorf("%s allows %q but %s does not load %s (has %v)", unitPath, allow, modulesPath, module, modules)
		}
	}
}
