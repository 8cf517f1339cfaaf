package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/settle-lab/settle/config"
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
	t.Setenv(config.EnvListen, "")
	t.Setenv(config.EnvDataDir, "")
	t.Chdir(configTestdata)
	tests := []struct {
		file, stdout, stderr, err string
	}{
		{"good/full.yaml", "good/full.yaml: ok (2 loggers, 3 channels, 4 targets)\n", "", ""},
		{"good/minimal.yaml", "good/minimal.yaml: ok (1 logger, 1 channel, 0 targets)\n", "", ""},
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
	out, _, err := execute(t, "config", "check", path)
	if want := path + ": ok (1 logger, 3 channels, 4 targets)\n"; err != nil || out != want {
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
