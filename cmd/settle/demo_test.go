package main

import (
	"context"
	"os"
	"path/filepath"
	"testing"
	"time"
)

// The demo's temporary journal folder is removed on a clean exit.
func TestDemoRemovesItsTemporaryFolder(t *testing.T) {
	tmp := t.TempDir()
	t.Setenv("TMPDIR", tmp)
	t.Setenv("SETTLE_DATA_DIR", "")
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() {
		done <- runDaemon(ctx, runFlags{demo: true, listen: "127.0.0.1:0", logLevel: "error"}, true, nil)
	}()
	var dirs []string
	for end := time.Now().Add(10 * time.Second); len(dirs) == 0 && time.Now().Before(end); time.Sleep(50 * time.Millisecond) {
		dirs, _ = filepath.Glob(filepath.Join(tmp, "settle-demo-*", "settle.db"))
	}
	if len(dirs) == 0 {
		t.Fatal("the demo made no journal under TMPDIR")
	}
	time.Sleep(time.Second)
	cancel()
	if err := <-done; err != nil {
		t.Fatalf("demo: %v", err)
	}
	left, _ := filepath.Glob(filepath.Join(tmp, "settle-demo-*"))
	if len(left) != 0 {
		entries, _ := os.ReadDir(left[0])
		t.Errorf("left behind: %v (%d entries)", left, len(entries))
	}
}
