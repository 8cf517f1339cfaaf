package deploy

import (
	"bytes"
	"os"
	"os/exec"
	"testing"
)

// requireTool returns the path of an outside tool the tests run. A missing tool skips
// the test locally; when CI=true it fails the test, so CI proves the check ran.
// ciPackage names the Debian package that provides it (it must be in .ci/packages.txt).
func requireTool(t *testing.T, name, ciPackage string) string {
	t.Helper()
	path, err := exec.LookPath(name)
	if err == nil {
		return path
	}
	if os.Getenv("CI") == "true" {
		t.Fatalf("%s not found but CI=true: install Debian package %q (listed in .ci/packages.txt): %v",
			name, ciPackage, err)
	}
	t.Skipf("%s not found (install Debian package %q to run this check; with CI=true this is a failure)",
		name, ciPackage)
	return ""
}

// optionalTool returns the path of a tool that CI is not required to have, or skips.
func optionalTool(t *testing.T, name string) string {
	t.Helper()
	path, err := exec.LookPath(name)
	if err != nil {
		t.Skipf("%s not found; skipping this check (it is optional, also in CI)", name)
	}
	return path
}

// run runs a tool in dir and fails the test with its output when it exits non-zero.
func run(t *testing.T, dir, tool string, args ...string) string {
	t.Helper()
	cmd := exec.Command(tool, args...)
	cmd.Dir = dir
	var out bytes.Buffer
	cmd.Stdout = &out
	cmd.Stderr = &out
	if err := cmd.Run(); err != nil {
		t.Fatalf("%s %v in %s: %v\n%s", tool, args, dir, err, out.String())
	}
	return out.String()
}
