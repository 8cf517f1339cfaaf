package ptytest

import (
	"fmt"
	"os"
	"path/filepath"
	"sync"
	"testing"

	"github.com/creack/pty"
)

// PTY is one pseudo-terminal pair. The test keeps the slave open for the pair's life so
// that the terminal stays configured between opens by the code under test.
type PTY struct {
	// Master is the logger's end: write lines here.
	Master *os.File
	// Slave is the test's own handle on the device end.
	Slave *os.File

	once sync.Once
}

// Open makes a pseudo-terminal pair, closed when the test ends.
func Open(t testing.TB) *PTY {
	t.Helper()
	m, s, err := pty.Open()
	if err != nil {
		t.Skipf("ptytest: no pseudo-terminal available: %v", err)
	}
	p := &PTY{Master: m, Slave: s}
	t.Cleanup(p.Close)
	return p
}

// Path is the device path of the slave end (e.g. /dev/pts/3).
func (p *PTY) Path() string { return p.Slave.Name() }

// WriteLine writes s and a newline on the master, failing the test on error.
func (p *PTY) WriteLine(t testing.TB, s string) {
	t.Helper()
	if _, err := p.Master.Write([]byte(s + "\n")); err != nil {
		t.Fatalf("ptytest: write %q on %s: %v", s, p.Path(), err)
	}
}

// Close closes both ends (the cable is pulled); it may be called more than once.
func (p *PTY) Close() {
	p.once.Do(func() {
		p.Master.Close()
		p.Slave.Close()
	})
}

// Link is a stable symlink to the current pseudo-terminal, like a /dev/serial/by-id
// link: configure the code under test with Path, then Unplug and Replug.
type Link struct {
	// Path is the symlink path.
	Path string

	t   testing.TB
	cur *PTY
}

// NewLink makes a pseudo-terminal and a symlink to it in a temporary directory.
func NewLink(t testing.TB) *Link {
	t.Helper()
	l := &Link{Path: filepath.Join(t.TempDir(), "logger-tty"), t: t}
	l.Replug()
	return l
}

// PTY returns the pseudo-terminal currently behind the link (nil after Unplug).
func (l *Link) PTY() *PTY { return l.cur }

// Unplug closes the current pseudo-terminal and removes the link, as udev removes a
// /dev/serial/by-id link when its adapter is pulled. (A link left dangling would point
// at a /dev/pts number that the kernel soon gives to another test's terminal.)
func (l *Link) Unplug() {
	if l.cur != nil {
		l.cur.Close()
		l.cur = nil
	}
	if err := os.Remove(l.Path); err != nil && !os.IsNotExist(err) {
		l.t.Errorf("ptytest: remove link %s: %v", l.Path, err)
	}
}

// Replug closes any current pseudo-terminal, makes a new one and repoints the link to
// it atomically (a new symlink renamed over the old one).
func (l *Link) Replug() *PTY {
	l.t.Helper()
	l.Unplug()
	p := Open(l.t)
	tmp := fmt.Sprintf("%s.new", l.Path)
	os.Remove(tmp)
	if err := os.Symlink(p.Path(), tmp); err != nil {
		l.t.Fatalf("ptytest: symlink %s -> %s: %v", tmp, p.Path(), err)
	}
	if err := os.Rename(tmp, l.Path); err != nil {
		l.t.Fatalf("ptytest: rename %s to %s: %v", tmp, l.Path, err)
	}
	l.cur = p
	return p
}
