package config

import (
	"errors"
	"flag"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

var update = flag.Bool("update", false, "rewrite the golden .err files in testdata/config/bad")

// testdataDir is the repository's testdata/config, relative to this package.
const testdataDir = "../testdata/config"

// clearEnv keeps a developer's or CI's SETTLE_* variables out of a test. viper ignores
// empty variables, so "" means unset.
func clearEnv(t *testing.T) {
	t.Helper()
	t.Setenv(EnvListen, "")
	t.Setenv(EnvDataDir, "")
}

// TestBadConfigs loads each testdata/config/bad/NAME.yaml and compares the error with
// NAME.err, exactly. Run with -update to rewrite the .err files after a deliberate
// change of wording, and review the diff.
func TestBadConfigs(t *testing.T) {
	clearEnv(t)
	dir, err := filepath.Abs(filepath.Join(testdataDir, "bad"))
	if err != nil {
		t.Fatal(err)
	}
	files, err := filepath.Glob(filepath.Join(dir, "*.yaml"))
	if err != nil || len(files) < 11 {
		t.Fatalf("want at least 11 bad configs in %s, found %d (%v)", dir, len(files), err)
	}
	// Load relative names, so that messages name the file as a user would type it.
	t.Chdir(dir)
	for _, file := range files {
		name := filepath.Base(file)
		t.Run(strings.TrimSuffix(name, ".yaml"), func(t *testing.T) {
			c, err := Load(name)
			if err == nil {
				t.Fatalf("Load(%s) = %+v, want an error", name, c)
			}
			if c != nil {
				t.Errorf("Load(%s) returned a config with its error", name)
			}
			got := err.Error() + "\n"
			golden := strings.TrimSuffix(name, ".yaml") + ".err"
			if *update {
				if err := os.WriteFile(golden, []byte(got), 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test ./config -run TestBadConfigs -update)", err)
			}
			if got != string(want) {
				t.Errorf("Load(%s) error:\n%s\nwant:\n%s", name, got, want)
			}
			for _, p := range Problems(err) {
				if p.File != name {
					t.Errorf("problem %q names file %q, want %q", p.Error(), p.File, name)
				}
			}
		})
	}
}

func ptr(f float64) *float64 { return &f }

// defaultJournal is the journal section a file without one decodes to.
var defaultJournal = Journal{CommitInterval: DefaultCommitInterval}

func TestGoodConfigs(t *testing.T) {
	clearEnv(t)
	oneColumn := daq.LineFormat{Separator: ",", Columns: []daq.Column{{Index: 1, Channel: "plate-1"}}}
	tests := []struct {
		file string
		want Config
	}{
		{"minimal.yaml", Config{
			Listen:   "127.0.0.1:8391",
			DataDir:  "settle-data",
			Loggers:  []Logger{{Logger: daq.Logger{Name: "bench-a", Port: "/dev/ttyUSB0", Baud: 9600, Format: "line", Line: oneColumn}}},
			Channels: []Channel{{Name: "plate-1"}},
			Journal:  defaultJournal,
			Display:  Display{Units: "C"},
		}},
		{"full.yaml", Config{
			Listen:  ":18391",
			DataDir: "/var/lib/settle",
			Loggers: []Logger{
				{Logger: daq.Logger{Name: "oven-rack", Port: "/dev/serial/by-id/usb-rack-if00-port0", Baud: 19200, Format: "line",
					Line: daq.LineFormat{Separator: ";", ClockColumn: 1, Columns: []daq.Column{{Index: 2, Channel: "air"}, {Index: 4, Channel: "disc-7"}}}}},
				{Logger: daq.Logger{Name: "bath", Port: "/dev/ttyUSB1", Baud: 9600, Format: "line",
					Line: daq.LineFormat{Separator: ",", Columns: []daq.Column{{Index: 1, Channel: "cylinder-3"}}}}},
			},
			Channels: []Channel{
				{Name: "air"},
				{Name: "disc-7", Ambient: "air", Targets: []Target{
					{Name: "handle", Celsius: ptr(60), Handling: true},
					{Name: "settled", Within: ptr(2)},
					{Name: "settled-held", Within: ptr(1.5), Hold: 2 * time.Hour},
				}},
				{Name: "cylinder-3", Targets: []Target{
					{Name: "test", Within: ptr(0.5), Hold: 90 * time.Minute},
				}},
			},
			Journal: defaultJournal,
			Display: Display{Units: "C"},
		}},
	}
	for _, tt := range tests {
		t.Run(tt.file, func(t *testing.T) {
			got, err := Load(filepath.Join(testdataDir, "good", tt.file))
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(*got, tt.want) {
				t.Errorf("Load(%s):\n got %+v\nwant %+v", tt.file, *got, tt.want)
			}
		})
	}
}

// TestExample checks that the example printed by `settle config example` is valid and
// says what its comments say.
func TestExample(t *testing.T) {
	clearEnv(t)
	c, err := Parse("example.yaml", []byte(Example))
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Loggers) != 1 || len(c.Channels) != 3 {
		t.Fatalf("example has %d loggers and %d channels, want 1 and 3", len(c.Loggers), len(c.Channels))
	}
	held := c.Channels[2].Targets[1]
	if held.Name != "test-temperature" || held.Celsius != nil || *held.Within != 0.5 || held.Hold != 30*time.Minute {
		t.Errorf("bar-2's second target = %+v, want test-temperature within 0.5 °C for 30m", held)
	}
	if c.Listen != DefaultListen || c.DataDir != DefaultDataDir {
		t.Errorf("example listen/data_dir = %q/%q, want the defaults it documents", c.Listen, c.DataDir)
	}
}

func TestEnvOverrides(t *testing.T) {
	t.Setenv(EnvListen, "0.0.0.0:9999")
	t.Setenv(EnvDataDir, "/srv/settle")
	for _, file := range []string{"minimal.yaml", "full.yaml"} { // without and with the keys in the file
		c, err := Load(filepath.Join(testdataDir, "good", file))
		if err != nil {
			t.Fatal(err)
		}
		if c.Listen != "0.0.0.0:9999" || c.DataDir != "/srv/settle" {
			t.Errorf("%s: listen, data_dir = %q, %q; want the environment's 0.0.0.0:9999, /srv/settle", file, c.Listen, c.DataDir)
		}
	}
	// An override is validated like the file, and the problem names the variable,
	// not a line of the file (full.yaml has listen on line 2).
	t.Setenv(EnvListen, "nonsense")
	_, err := Load(filepath.Join(testdataDir, "good", "full.yaml"))
	want := `../testdata/config/good/full.yaml: listen: want host:port such as "127.0.0.1:8391" or ":8391", got "nonsense" (from SETTLE_LISTEN)`
	if err == nil || err.Error() != want {
		t.Errorf("bad SETTLE_LISTEN: err = %v, want %s", err, want)
	}
}

func TestLoadMissingFile(t *testing.T) {
	_, err := Load(filepath.Join(t.TempDir(), "absent.yaml"))
	if !errors.Is(err, os.ErrNotExist) || !strings.Contains(err.Error(), "absent.yaml") {
		t.Errorf("Load(absent) = %v, want a not-exist error naming the file", err)
	}
}

func TestLoadTooLarge(t *testing.T) {
	path := filepath.Join(t.TempDir(), "huge.yaml")
	if err := os.WriteFile(path, make([]byte, MaxFileSize+1), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Load(path)
	if err == nil || !strings.HasPrefix(err.Error(), path+": larger than") {
		t.Errorf("Load(huge) = %v, want a size error naming the file", err)
	}
}

func TestValidateWithoutFile(t *testing.T) {
	c := Config{Listen: DefaultListen, DataDir: "d", Channels: []Channel{{Name: "a"}},
		Loggers: []Logger{{Logger: daq.Logger{Name: "l", Port: "p", Baud: 9600, Format: "line",
			Line: daq.LineFormat{Separator: ",", Columns: []daq.Column{{Index: 0, Channel: "a"}}}}}}}
	err := c.Validate()
	want := "loggers[0].line.columns[0].index: must be ≥ 1 (fields count from 1), got 0"
	if err == nil || err.Error() != want {
		t.Fatalf("Validate() = %v, want %s", err, want)
	}
	c.Loggers[0].Line.Columns[0].Index = 1
	if err := c.Validate(); err != nil {
		t.Errorf("Validate() after the fix = %v, want nil", err)
	}
}

func TestProblems(t *testing.T) {
	_, err := Parse("p.yaml", []byte("loggers: []\nchannels: []\n"))
	ps := Problems(err)
	if len(ps) != 2 {
		t.Fatalf("Problems = %v, want 2", ps)
	}
	// In the order of the file's keys: loggers before channels.
	if ps[0].Key != "loggers" || ps[1].Key != "channels" || ps[0].File != "p.yaml" {
		t.Errorf("Problems keys = %q, %q in %q; want loggers, channels in p.yaml", ps[0].Key, ps[1].Key, ps[0].File)
	}
	if got := Problems(errors.New("plain")); len(got) != 1 || got[0].Msg != "plain" {
		t.Errorf("Problems(plain error) = %v", got)
	}
	if Problems(nil) != nil {
		t.Error("Problems(nil) != nil")
	}
}
