package main

import (
	"bytes"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/pem"
	"fmt"
	"math/big"
	"net"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq/ptytest"
)

// configTestdata is the repository's testdata/config, relative to this package.
const configTestdata = "../../testdata/config"

// execute runs the root command with args and returns stdout, stderr and the error.
func execute(t *testing.T, args ...string) (string, string, error) {
	t.Helper()
	var out, errOut bytes.Buffer
	root := newRootCmd()
	root.SetArgs(args)
	root.SetOut(&out)
	root.SetErr(&errOut)
	err := root.Execute()
	return out.String(), errOut.String(), err
}

func TestConfigCheck(t *testing.T) {
	// Port 0 (any free port) is not checked for being in use, so the result does not
	// depend on what else runs on this machine.
	t.Setenv(config.EnvListen, "127.0.0.1:0")
	t.Setenv(config.EnvDataDir, "")
	t.Chdir(configTestdata)
	tests := []struct {
		file, stdout, stderr, err string
	}{
		// A port that does not exist is a warning, and the exit status is 0.
		{"host/no-port.yaml", "host/no-port.yaml: ok (1 logger, 1 channel, 1 target), 1 warning\n",
			"host/no-port.yaml: line 6: warning: loggers[0].port: /dev/settle-test-no-such-port does not exist now; settle run starts anyway and keeps trying it (plug the logger in, or fix the path)\n", ""},
		// TLS files that cannot be read are errors.
		{"host/tls-missing.yaml", "",
			"host/tls-missing.yaml: line 3: http.tls_cert: cannot read /nonexistent/settle/cert.pem: no such file or directory\n" +
				"host/tls-missing.yaml: line 4: http.tls_key: cannot read /nonexistent/settle/key.pem: no such file or directory\n" +
				"host/tls-missing.yaml: line 7: warning: loggers[0].port: /dev/settle-test-no-such-port does not exist now; settle run starts anyway and keeps trying it (plug the logger in, or fix the path)\n",
			"host/tls-missing.yaml: 2 problems"},
		{"bad/unknown-deep.yaml", "",
			`bad/unknown-deep.yaml: line 7: unknown key "loggers[0].line.columns[1].chanel" (known keys here: channel, index)` + "\n" +
				`bad/unknown-deep.yaml: line 7: loggers[0].line.columns[1].channel: must not be empty` + "\n" +
				`bad/unknown-deep.yaml: line 12: unknown key "channels[0].targets[1].celcius" (known keys here: celsius, handling, hold, name, within)` + "\n" +
				`bad/unknown-deep.yaml: line 12: channels[0].targets[1]: give celsius (a fixed temperature) or within (a band around the settling temperature)` + "\n",
			"bad/unknown-deep.yaml: 4 problems"},
		{"bad/zero-index.yaml", "",
			"bad/zero-index.yaml: line 7: loggers[0].line.columns[1].index: must be ≥ 1 (fields count from 1), got 0\n",
			"bad/zero-index.yaml: 1 problem"},
		// Keys that differ only in case are refused, naming both key paths (issue 15).
		{"bad/case-keys.yaml", "",
			"bad/case-keys.yaml: line 4: LISTEN: differs only in case from listen at line 3; keys are read without regard to case, so one would silently replace the other: keep one\n" +
				"bad/case-keys.yaml: line 8: loggers[0].Port: differs only in case from loggers[0].port at line 7; keys are read without regard to case, so one would silently replace the other: keep one\n" +
				"bad/case-keys.yaml: line 13: Channels: differs only in case from channels at line 11; keys are read without regard to case, so one would silently replace the other: keep one\n",
			"bad/case-keys.yaml: 3 problems"},
		// An indentation slip on line 5 is reported at line 5 (was "near line 2").
		{"bad/indent-line5.yaml", "",
			"bad/indent-line5.yaml: line 5: did not find expected '-' indicator (is this line indented like the keys it belongs with?)\n",
			"bad/indent-line5.yaml: 1 problem"},
		{"absent.yaml", "", "config: open absent.yaml: no such file or directory\n", "absent.yaml: 1 problem"},
	}
	for _, tt := range tests {
		t.Run(tt.file, func(t *testing.T) {
			stdout, stderr, err := execute(t, "config", "check", tt.file)
			if stdout != tt.stdout || stderr != tt.stderr {
				t.Errorf("stdout %q, stderr %q\nwant %q, %q", stdout, stderr, tt.stdout, tt.stderr)
			}
			if got := errText(err); got != tt.err {
				t.Errorf("error %q, want %q", got, tt.err)
			}
		})
	}
}

func errText(err error) string {
	if err == nil {
		return ""
	}
	return err.Error()
}

// TestConfigCheckExitCode checks the exit code that a shell script sees.
func TestConfigCheckExitCode(t *testing.T) {
	t.Setenv(config.EnvListen, "")
	t.Setenv(config.EnvDataDir, "")
	good := filepath.Join(configTestdata, "good", "minimal.yaml")
	bad := filepath.Join(configTestdata, "bad", "zero-index.yaml")
	t.Setenv(config.EnvListen, "127.0.0.1:0")
	if code := run([]string{"config", "check", good}); code != 0 {
		t.Errorf("check good: exit %d, want 0", code)
	}
	if code := run([]string{"config", "check", bad}); code == 0 {
		t.Error("check bad: exit 0, want non-zero")
	}
	if code := run([]string{"config", "check"}); code == 0 {
		t.Error("check without FILE: exit 0, want non-zero")
	}
}

// TestConfigExample checks that the printed example is the package's and passes check.
func TestConfigExample(t *testing.T) {
	t.Setenv(config.EnvListen, "")
	t.Setenv(config.EnvDataDir, "")
	stdout, _, err := execute(t, "config", "example")
	if err != nil {
		t.Fatal(err)
	}
	if stdout != config.Example || !strings.HasPrefix(stdout, "# settle configuration") {
		t.Fatalf("example output differs from config.Example:\n%s", stdout)
	}
	path := filepath.Join(t.TempDir(), "settle.yaml")
	if err := os.WriteFile(path, []byte(stdout), 0o644); err != nil {
		t.Fatal(err)
	}
	// The example's /dev/ttyUSB0 may or may not be plugged in here: a warning then.
	out, _, err := execute(t, "config", "check", path)
	if want := path + ": ok (1 logger, 3 channels, 4 targets)"; err != nil || !strings.HasPrefix(out, want) {
		t.Errorf("check of the example: %q, %v; want %q", out, err, want)
	}
}

func TestConfigHelp(t *testing.T) {
	stdout, _, err := execute(t, "config", "--help")
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"check", "example", "SETTLE_LISTEN", "SETTLE_DATA_DIR"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("settle config --help lacks %q:\n%s", want, stdout)
		}
	}
}

// TestConfigCheckHost checks a configuration against this computer with real parts: a
// pseudo-terminal as a present serial port, a missing device, a plain file, a listen
// port this test holds, and TLS files (a pair made here, and garbage). Warnings leave
// the exit status 0; TLS problems make it 1.
func TestConfigCheckHost(t *testing.T) {
	t.Setenv(config.EnvListen, "")
	t.Setenv(config.EnvDataDir, "")
	dir := t.TempDir()
	tty := ptytest.Open(t)
	plain := filepath.Join(dir, "not-a-port")
	writeFile(t, plain, "")
	held, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer held.Close()
	cert, key := selfSigned(t, dir)
	path := filepath.Join(dir, "settle.yaml")
	writeFile(t, path, fmt.Sprintf(`listen: %s
http: {tls_cert: %s, tls_key: %s}
loggers:
  - {name: a, port: %s, line: {columns: [{index: 1, channel: p1}]}}
  - {name: b, port: /dev/settle-test-no-such-port, line: {columns: [{index: 1, channel: p2}]}}
  - {name: c, port: %s, line: {columns: [{index: 1, channel: p3}]}}
channels: [{name: p1}, {name: p2}, {name: p3}]
`, held.Addr(), cert, key, tty.Path(), plain))
	stdout, stderr, err := execute(t, "config", "check", path)
	inUse := path + ": line 1: warning: listen: " + held.Addr().String() + " is in use by another program (another settle?); settle run would fail to start: stop it or choose another port\n"
	wantErr := inUse +
		path + ": line 5: warning: loggers[1].port: /dev/settle-test-no-such-port does not exist now; settle run starts anyway and keeps trying it (plug the logger in, or fix the path)\n" +
		path + ": line 6: warning: loggers[2].port: " + plain + " is a plain file, not a serial device\n"
	if err != nil || stderr != wantErr || stdout != path+": ok (3 loggers, 3 channels, 0 targets), 3 warnings\n" {
		t.Errorf("check: err %v\nstdout %q\nstderr %s\nwant   %s", err, stdout, stderr, wantErr)
	}
	if code := run([]string{"config", "check", path}); code != 0 {
		t.Errorf("warnings only: exit %d, want 0", code)
	}
	// The same file with a certificate that is not PEM: an error, exit 1.
	writeFile(t, cert, "not a certificate")
	_, stderr, err = execute(t, "config", "check", path)
	if want := inUse + path + ": line 2: http: tls_cert and tls_key are not a usable certificate and key: tls: failed to find any PEM data in certificate input\n"; err == nil || !strings.HasPrefix(stderr, want) {
		t.Errorf("bad certificate: err %v, stderr %q; want it to start with %q", err, stderr, want)
	}
	if code := run([]string{"config", "check", path}); code != 1 {
		t.Errorf("bad certificate: exit %d, want 1", code)
	}
}

func writeFile(t *testing.T, path, text string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(text), 0o600); err != nil {
		t.Fatal(err)
	}
}

// selfSigned writes a self-signed ECDSA certificate and its key as PEM files in dir.
func selfSigned(t *testing.T, dir string) (certPath, keyPath string) {
	t.Helper()
	priv, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	tmpl := &x509.Certificate{SerialNumber: big.NewInt(1), Subject: pkix.Name{CommonName: "settle-test"},
		NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour)}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, tmpl, &priv.PublicKey, priv)
	if err != nil {
		t.Fatal(err)
	}
	keyDER, err := x509.MarshalECPrivateKey(priv)
	if err != nil {
		t.Fatal(err)
	}
	certPath, keyPath = filepath.Join(dir, "cert.pem"), filepath.Join(dir, "key.pem")
	writeFile(t, certPath, string(pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der})))
	writeFile(t, keyPath, string(pem.EncodeToMemory(&pem.Block{Type: "EC PRIVATE KEY", Bytes: keyDER})))
	return certPath, keyPath
}

// TestConfigMaterials lists the built-in materials one per line with their properties.
func TestConfigMaterials(t *testing.T) {
	stdout, _, err := execute(t, "config", "materials")
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSuffix(stdout, "\n"), "\n")
	if len(lines) != 21 || !strings.HasPrefix(lines[0], "name ") {
		t.Fatalf("want a header and 20 materials, got %d lines:\n%s", len(lines), stdout)
	}
	// carbon steel: Incropera 6th ed. Table A.1 (from memory, as predict/material says).
	if !slices.ContainsFunc(lines, func(l string) bool {
		return strings.Join(strings.Fields(l), " ") == "carbon steel 7854 434 60.5 0.8 (0.7–0.9); bright 0.07–0.25"
	}) {
		t.Errorf("no carbon steel line with its properties:\n%s", stdout)
	}
}
