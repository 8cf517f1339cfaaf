package sim

import (
	"errors"
	"fmt"
	"os"
	"sync"
	"time"

	"github.com/creack/pty"
	"golang.org/x/sys/unix"
)

// stalePending is how many unread bytes may wait in the terminal before Write throws
// them away: a logger's bytes are lost when nobody listens, and a full terminal buffer
// (about 4 KiB) would otherwise block the writer.
const stalePending = 2048

// writeTimeout bounds one Write on the master, so a stuck terminal cannot hang Run.
const writeTimeout = 5 * time.Second

// PTY is a pseudo-terminal that stands in for a logger's serial port: readers open
// Path (e.g. with go.bug.st/serial), the simulator writes lines on it. It is an
// io.WriteCloser.
type PTY struct {
	master *os.File // non-blocking, so deadlines and Close interrupt a Write
	slave  *os.File // held open so the terminal stays up between readers
	path   string

	mu      sync.Mutex
	dropped int64
}

// OpenPTY makes a pseudo-terminal in raw mode (no echo, no line editing).
func OpenPTY() (*PTY, error) {
	m, s, err := pty.Open()
	if err != nil {
		return nil, fmt.Errorf("sim: open pseudo-terminal: %w", err)
	}
	p := &PTY{slave: s, path: s.Name()}
	if err := makeRaw(int(s.Fd())); err != nil {
		m.Close()
		s.Close()
		return nil, fmt.Errorf("sim: raw mode on %s: %w", p.path, err)
	}
	if p.master, err = nonBlocking(m); err != nil {
		s.Close()
		return nil, fmt.Errorf("sim: pseudo-terminal master for %s: %w", p.path, err)
	}
	return p, nil
}

// nonBlocking returns a pollable copy of f (closing f): pty.Open leaves the master in
// blocking mode, where neither a deadline nor Close can interrupt a Write.
func nonBlocking(f *os.File) (*os.File, error) {
	defer f.Close()
	fd, err := unix.Dup(int(f.Fd()))
	if err != nil {
		return nil, err
	}
	unix.CloseOnExec(fd)
	if err := unix.SetNonblock(fd, true); err != nil {
		unix.Close(fd)
		return nil, err
	}
	return os.NewFile(uintptr(fd), "/dev/ptmx"), nil
}

// makeRaw sets the terminal like cfmakeraw(3).
func makeRaw(fd int) error {
	t, err := unix.IoctlGetTermios(fd, unix.TCGETS)
	if err != nil {
		return err
	}
	t.Iflag &^= unix.IGNBRK | unix.BRKINT | unix.PARMRK | unix.ISTRIP | unix.INLCR | unix.IGNCR | unix.ICRNL | unix.IXON
	t.Oflag &^= unix.OPOST
	t.Lflag &^= unix.ECHO | unix.ECHONL | unix.ICANON | unix.ISIG | unix.IEXTEN
	t.Cflag &^= unix.CSIZE | unix.PARENB
	t.Cflag |= unix.CS8
	t.Cc[unix.VMIN], t.Cc[unix.VTIME] = 1, 0
	return unix.IoctlSetTermios(fd, unix.TCSETS, t)
}

// Path is the device path readers open (e.g. /dev/pts/4).
func (p *PTY) Path() string { return p.path }

// Dropped returns how many unread bytes were thrown away because nobody was reading.
func (p *PTY) Dropped() int64 {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.dropped
}

// Write sends b to the reader. Bytes left unread beyond a couple of KiB are discarded
// first, as a logger's output is lost when nobody listens.
func (p *PTY) Write(b []byte) (int, error) {
	sfd := int(p.slave.Fd())
	if n, err := unix.IoctlGetInt(sfd, unix.TIOCINQ); err == nil && n > stalePending {
		if err := unix.IoctlSetInt(sfd, unix.TCFLSH, unix.TCIFLUSH); err == nil {
			p.mu.Lock()
			p.dropped += int64(n)
			p.mu.Unlock()
		}
	}
	if err := p.master.SetWriteDeadline(time.Now().Add(writeTimeout)); err != nil {
		return 0, fmt.Errorf("sim: write to %s: %w", p.path, err)
	}
	n, err := p.master.Write(b)
	if err != nil {
		return n, fmt.Errorf("sim: write to %s: %w", p.path, err)
	}
	return n, nil
}

// Close closes both ends; readers see the port vanish.
func (p *PTY) Close() error {
	return errors.Join(p.master.Close(), p.slave.Close())
}
