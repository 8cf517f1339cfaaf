package main

import (
	"errors"
	"fmt"
	"io"
	"log/slog"
	"os"
	"strings"
	"testing"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/daq/ptytest"
)

// A second daemon on the data directory of a running one is refused with an error that
// names the directory and the running daemon's pid, and it leaves the first untouched.
func TestSecondDaemonOnDataDirRefused(t *testing.T) {
	p := ptytest.Open(t)
	dir := t.TempDir()
	first, stop := runDaemonAt(t, clockConfig(p.Path(), dir))
	defer stop()
	_, err := newDaemon(clockConfig(p.Path(), dir), slog.New(slog.NewTextHandler(io.Discard, nil)))
	if !errors.Is(err, journal.ErrLocked) {
		t.Fatalf("second daemon: %v, want journal.ErrLocked", err)
	}
	for _, want := range []string{dir, fmt.Sprintf("(pid %d)", os.Getpid())} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error %q does not name %q", err, want)
		}
	}
	if err := first.rec.j.Flush(); err != nil {
		t.Errorf("the first daemon's journal after the refusal: %v", err)
	}
}
