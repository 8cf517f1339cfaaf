package config

import (
	"os"
	"path/filepath"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
)

func copyFile(t *testing.T, from, to string) {
	t.Helper()
	data, err := os.ReadFile(from)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(to, data, 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestReload swaps in a good file, keeps the old value on a bad one, while readers
// read concurrently (run with -race).
func TestReload(t *testing.T) {
	clearEnv(t)
	path := filepath.Join(t.TempDir(), "settle.yaml")
	copyFile(t, filepath.Join(testdataDir, "good", "minimal.yaml"), path)
	first, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	var current atomic.Pointer[Config]
	current.Store(first)

	stop := make(chan struct{})
	var readers sync.WaitGroup
	for range 4 {
		readers.Go(func() {
			for {
				select {
				case <-stop:
					return
				default:
				}
				if c := current.Load(); c == nil || len(c.Loggers) == 0 {
					t.Error("reader saw a missing or empty config")
					return
				}
			}
		})
	}

	copyFile(t, filepath.Join(testdataDir, "bad", "zero-index.yaml"), path)
	err = Reload(path, &current)
	if err == nil || !strings.HasPrefix(err.Error(), path+": line 7: loggers[0].line.columns[1].index:") {
		t.Errorf("Reload(bad) = %v, want the zero-index problem naming %s", err, path)
	}
	if current.Load() != first {
		t.Error("Reload(bad) replaced the config; want the old one kept")
	}

	copyFile(t, filepath.Join(testdataDir, "good", "full.yaml"), path)
	if err := Reload(path, &current); err != nil {
		t.Fatalf("Reload(good) = %v", err)
	}
	if got := current.Load(); got == first || got.Loggers[0].Name != "oven-rack" {
		t.Errorf("after Reload(good) first logger = %q, want the new file's oven-rack", got.Loggers[0].Name)
	}

	if err := os.Remove(path); err != nil {
		t.Fatal(err)
	}
	kept := current.Load()
	if err := Reload(path, &current); err == nil || current.Load() != kept {
		t.Errorf("Reload(missing file) = %v and swapped=%v; want an error and the old config", err, current.Load() != kept)
	}
	close(stop)
	readers.Wait()
}

func TestReloadNilHolder(t *testing.T) {
	err := Reload("settle.yaml", nil)
	if err == nil || !strings.Contains(err.Error(), "settle.yaml") {
		t.Errorf("Reload(nil holder) = %v, want an error naming the file", err)
	}
}
