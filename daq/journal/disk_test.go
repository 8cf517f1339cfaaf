package journal

import (
	"errors"
	"log/slog"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// logBuffer collects log lines for assertions.
func logBuffer() (*slog.Logger, *syncBuffer) {
	var b syncBuffer
	return slog.New(slog.NewTextHandler(&b, nil)), &b
}

// fillUp appends readings of c1 until a flush fails (the journal's page limit reached,
// as on a full disk) and returns how many it appended.
func fillUp(t *testing.T, j *Journal) int {
	t.Helper()
	i, deadline := 0, time.Now().Add(20*time.Second)
	for j.Flush() == nil {
		if time.Now().After(deadline) {
			t.Fatal("the journal never filled up")
		}
		for range 100 {
			j.Append(reading("c1", i))
			i++
		}
	}
	return i
}

// TestDiskFull fills the journal for real: SQLite's max_page_count makes every insert
// fail with SQLITE_FULL, as on a full disk. Readings stay in memory, Health says why,
// one log line says it, and raising the limit (the disk recovering) writes them all.
func TestDiskFull(t *testing.T) {
	log, logs := logBuffer()
	j, _ := open(t, Options{CommitInterval: time.Hour, MaxBytes: 128 << 10, Logger: log})
	i := fillUp(t, j)
	h := j.Health()
	if h.Writable || !strings.Contains(h.LastError, "full") || h.Pending == 0 {
		t.Fatalf("health on a full journal = %+v, want not writable, a 'full' error and pending readings", h)
	}
	for range 3 { // retries while full must not duplicate or lose anything
		j.Append(reading("c1", i))
		i++
		if err := j.Flush(); err == nil {
			t.Fatal("Flush on a full journal succeeded")
		}
	}
	if n := strings.Count(logs.String(), "journal not writable"); n != 1 {
		t.Errorf("%d 'journal not writable' log lines, want 1 (then one a minute):\n%s", n, logs.String())
	}
	if _, err := j.writer().Exec("PRAGMA max_page_count = 1000000"); err != nil {
		t.Fatal(err)
	}
	mustFlush(t, j)
	h = j.Health()
	if !h.Writable || h.LastError != "" || h.Pending != 0 || h.Committed != uint64(i) || h.Dropped != 0 {
		t.Errorf("health after recovery = %+v, want writable, %d committed, none pending", h, i)
	}
	if n, err := j.Count("c1"); err != nil || n != int64(i) {
		t.Errorf("%d readings on disk (%v), want %d", n, err, i)
	}
	if !strings.Contains(logs.String(), "journal writable again") {
		t.Errorf("no recovery log line:\n%s", logs.String())
	}
}

// TestDataDirUnwritable starts with a data directory that cannot be created (its parent
// is a regular file, which fails for root too), keeps readings in memory, and writes
// them when the directory becomes usable.
func TestDataDirUnwritable(t *testing.T) {
	base := t.TempDir()
	blocker := filepath.Join(base, "data")
	if err := os.WriteFile(blocker, []byte("not a directory"), 0o600); err != nil {
		t.Fatal(err)
	}
	log, logs := logBuffer()
	dir := filepath.Join(blocker, "journal")
	j, err := Open(dir, Options{CommitInterval: 10 * time.Millisecond, Logger: log})
	if err != nil {
		t.Fatalf("Open on an unusable directory must not fail: %v", err)
	}
	defer j.Close()
	for i := range 20 {
		j.Append(reading("c1", i))
	}
	h := j.Health()
	if h.Writable || !strings.Contains(h.LastError, "data directory") || h.Pending != 20 {
		t.Fatalf("health = %+v, want not writable with a data directory error and 20 pending", h)
	}
	if _, err := j.Count("c1"); !errors.Is(err, ErrUnavailable) {
		t.Errorf("Count while unavailable: %v, want ErrUnavailable", err)
	}
	if !strings.Contains(logs.String(), "journal not writable") || !strings.Contains(logs.String(), blocker) {
		t.Errorf("log does not name the problem and the path:\n%s", logs.String())
	}
	if err := os.Remove(blocker); err != nil {
		t.Fatal(err)
	}
	waitFor(t, func() bool { return j.Health().Committed == 20 })
	if n, err := j.Count("c1"); err != nil || n != 20 {
		t.Errorf("%d readings on disk (%v), want 20", n, err)
	}
}

// TestReadOnlyDirectory makes the data directory read-only after the journal has
// been created. Root ignores permissions, so the test needs an ordinary user.
func TestReadOnlyDirectory(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("running as root: permissions do not stop root; TestDataDirUnwritable covers an unusable directory")
	}
	dir := t.TempDir()
	if err := os.Chmod(dir, 0o500); err != nil {
		t.Fatal(err)
	}
	defer os.Chmod(dir, 0o700)
	j, err := Open(filepath.Join(dir, "sub"), Options{CommitInterval: 10 * time.Millisecond, Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	j.Append(reading("c1", 0))
	if h := j.Health(); h.Writable || h.Pending != 1 {
		t.Fatalf("health in a read-only directory = %+v", h)
	}
	if err := os.Chmod(dir, 0o700); err != nil {
		t.Fatal(err)
	}
	waitFor(t, func() bool { return j.Health().Committed == 1 })
}

func waitFor(t *testing.T, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatal("condition not met within 10 s")
		}
		time.Sleep(5 * time.Millisecond)
	}
}

// TestBacklogAfterOutage queues more readings than one transaction takes while the
// directory is unusable, then checks that all of them are written, in order, once it
// recovers.
func TestBacklogAfterOutage(t *testing.T) {
	blocker := filepath.Join(t.TempDir(), "data")
	if err := os.WriteFile(blocker, nil, 0o600); err != nil {
		t.Fatal(err)
	}
	defer func(v int) { maxCommit = v }(maxCommit)
	maxCommit = 1000 // SQLite is slow under -race; the chunking is the same
	j, err := Open(filepath.Join(blocker, "j"), Options{CommitInterval: time.Hour, BatchSize: 500, Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	n := 3*maxCommit + 17
	for i := range n {
		j.Append(reading("c1", i))
	}
	if h := j.Health(); h.Pending != n || h.Writable {
		t.Fatalf("health during the outage %+v, want %d pending", h, n)
	}
	if err := os.Remove(blocker); err != nil {
		t.Fatal(err)
	}
	mustFlush(t, j)
	if h := j.Health(); h.Committed != uint64(n) || h.Pending != 0 {
		t.Fatalf("health after recovery %+v, want %d committed", h, n)
	}
	i := 0
	for r, err := range j.Readings("c1", time.Time{}, time.Time{}) {
		if err != nil || !r.Time.Equal(reading("c1", i).Time) {
			t.Fatalf("reading %d: %v at %v, want %v", i, err, r.Time, reading("c1", i).Time)
		}
		i++
	}
	if i != n {
		t.Errorf("%d readings on disk, want %d", i, n)
	}
}

// TestLastSeqOnFullDisk: a daemon restarting on a full disk cannot write the new
// generation mark; it gets the current one, which still covers every committed
// reading, so it resumes its history instead of starting every channel empty.
func TestLastSeqOnFullDisk(t *testing.T) {
	log, logs := logBuffer()
	j, _ := open(t, Options{CommitInterval: time.Hour, MaxBytes: 128 << 10, Logger: log})
	i := fillUp(t, j)
	// Some writes still fit between a full batch and the mark; fill what is left.
	for {
		if _, err := j.writer().Exec("INSERT INTO marks (gen) VALUES (?)", j.gen+1000+int64(i)); err != nil {
			break
		}
		i++
	}
	onDisk, err := j.Count("c1")
	if err != nil || onDisk == 0 {
		t.Fatalf("%d readings on disk (%v)", onDisk, err)
	}
	mark, err := j.LastSeq()
	if err != nil {
		t.Fatalf("LastSeq on a full disk: %v", err)
	}
	var replayed int64
	if err := j.ReplayBefore(time.Time{}, mark, func(daq.Reading) bool { replayed++; return true }); err != nil {
		t.Fatal(err)
	}
	if replayed != onDisk {
		t.Errorf("replayed %d readings before the mark, want all %d on disk", replayed, onDisk)
	}
	if !strings.Contains(logs.String(), "no new generation mark") {
		t.Errorf("no log line about the mark:\n%s", logs.String())
	}
}
