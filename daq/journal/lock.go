package journal

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
)

// LockName is the lock file a writing journal holds in its data directory.
const LockName = "settle.lock"

// ErrLocked is returned by Open when another process writes the same data directory.
var ErrLocked = errors.New("journal: data directory in use")

// lockDir takes an exclusive flock on dir's lock file and writes this process's id
// into it. The lock lasts until the file is closed (or the process dies, which the
// kernel handles), so a stale file left by a kill -9 never blocks a restart.
func lockDir(dir string) (*os.File, error) {
	path := filepath.Join(dir, LockName)
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE|syscall.O_CLOEXEC, 0o640)
	if err != nil {
		return nil, fmt.Errorf("journal: lock file %s: %w", path, err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		if !errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, fmt.Errorf("journal: lock %s: %w", path, err)
		}
		return nil, fmt.Errorf("%w: %s is used by another settle daemon%s; stop it or give this one another data_dir",
			ErrLocked, dir, holder(path))
	}
	if err := f.Truncate(0); err == nil {
		f.WriteAt([]byte(strconv.Itoa(os.Getpid())+"\n"), 0)
	}
	return f, nil
}

// holder names the process id written in the lock file, if it can be read.
func holder(path string) string {
	b, err := os.ReadFile(path)
	if err != nil {
		return ""
	}
	if pid, err := strconv.Atoi(strings.TrimSpace(string(b))); err == nil && pid > 0 {
		return fmt.Sprintf(" (pid %d)", pid)
	}
	return ""
}
