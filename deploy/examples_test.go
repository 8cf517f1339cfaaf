package deploy

import (
	"net"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/settle-lab/settle/config"
)

// loadExample loads an example with config.Load, the daemon's own loader, with the
// environment overrides cleared so the file alone is tested.
func loadExample(t *testing.T, path string) *config.Config {
	t.Helper()
	for _, env := range []string{config.EnvListen, "SETTLE_DATA_DIR"} {
		t.Setenv(env, "")
		os.Unsetenv(env)
	}
	cfg, err := config.Load(path)
	if err != nil {
		t.Fatalf("config.Load(%s): %v", path, err)
	}
	return cfg
}

func examplePaths(t *testing.T) []string {
	t.Helper()
	paths, err := filepath.Glob("examples/*.yaml")
	if err != nil || len(paths) < 2 {
		t.Fatalf("examples/*.yaml: found %v (err %v), want at least 2", paths, err)
	}
	return paths
}

// TestExamplesLoad loads every example and checks what the operator's guide and the
// systemd unit assume of it.
func TestExamplesLoad(t *testing.T) {
	for _, path := range examplePaths(t) {
		t.Run(filepath.Base(path), func(t *testing.T) {
			cfg := loadExample(t, path)
			// StateDirectory=settle in systemd/settle.service makes /var/lib/settle.
			if cfg.DataDir != "/var/lib/settle" {
				t.Errorf("%s: data_dir = %q, want /var/lib/settle (the unit's StateDirectory)", path, cfg.DataDir)
			}
			// Prometheus scrapes from another host, so the daemon must not listen on loopback only.
			host, _, err := net.SplitHostPort(cfg.Listen)
			if err != nil {
				t.Fatalf("%s: listen %q: %v", path, cfg.Listen, err)
			}
			if ip := net.ParseIP(host); ip != nil && ip.IsLoopback() {
				t.Errorf("%s: listen %q is loopback only; Prometheus on another host cannot scrape it", path, cfg.Listen)
			}
		})
	}
}

// TestExampleContents checks each example is the scenario its comments describe.
func TestExampleContents(t *testing.T) {
	tests := []struct {
		file             string
		loggers          int
		channels         int
		handlingTargets  int
		separators       []string
		clockColumns     []int
		ambientsResolved int // channels that name an ambient channel
	}{
		{"one-bench.yaml", 1, 5, 4, []string{","}, []int{1}, 4},
		{"furnace-room.yaml", 3, 10, 5, []string{";", "\t", ","}, []int{0, 1, 2}, 7},
	}
	for _, tt := range tests {
		t.Run(tt.file, func(t *testing.T) {
			cfg := loadExample(t, filepath.Join("examples", tt.file))
			if len(cfg.Loggers) != tt.loggers || len(cfg.Channels) != tt.channels {
				t.Fatalf("%s: %d loggers, %d channels; want %d, %d",
					tt.file, len(cfg.Loggers), len(cfg.Channels), tt.loggers, tt.channels)
			}
			for i, l := range cfg.Loggers {
				if l.Line.Separator != tt.separators[i] || l.Line.ClockColumn != tt.clockColumns[i] {
					t.Errorf("%s: logger %s: separator %q, clock_column %d; want %q, %d",
						tt.file, l.Name, l.Line.Separator, l.Line.ClockColumn, tt.separators[i], tt.clockColumns[i])
				}
			}
			handling, ambients := 0, 0
			for _, c := range cfg.Channels {
				if c.Ambient != "" {
					ambients++
				}
				for _, tg := range c.Targets {
					if tg.Handling {
						handling++
					}
				}
			}
			if handling != tt.handlingTargets || ambients != tt.ambientsResolved {
				t.Errorf("%s: %d handling targets, %d channels with an ambient; want %d, %d",
					tt.file, handling, ambients, tt.handlingTargets, tt.ambientsResolved)
			}
		})
	}
}

// TestExamplePortsHaveUdevNames checks that every /dev/settle/<name> port in the
// examples is made by a rule in udev/99-settle-logger.rules.
func TestExamplePortsHaveUdevNames(t *testing.T) {
	links := map[string]bool{}
	for _, r := range udevRules(t, udevPath) {
		links["/dev/"+r.assign["SYMLINK+"]] = true
	}
	for _, path := range examplePaths(t) {
		for _, l := range loadExample(t, path).Loggers {
			if strings.HasPrefix(l.Port, "/dev/settle/") && !links[l.Port] {
				t.Errorf("%s: logger %s: port %s has no SYMLINK+= rule in %s", path, l.Name, l.Port, udevPath)
			}
		}
	}
}
