package journal

import (
	"bufio"
	"bytes"
	"database/sql"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// crashEnv selects the crash helper mode of the test binary: its value is the data
// directory the helper writes to.
const crashEnv = "SETTLE_JOURNAL_CRASH_HELPER"

func TestMain(m *testing.M) {
	if dir := os.Getenv(crashEnv); dir != "" {
		crashHelper(dir)
		return
	}
	os.Exit(m.Run())
}

// crashHelper appends numbered readings until killed. Reading i has Celsius i. Before
// appending readings up to n (exclusive) it prints "A n"; after each commit it sees, it
// prints "C n": readings 0..n-1 are committed. Writes to stdout go straight to the pipe,
// so every line printed before the kill reaches the parent.
func crashHelper(dir string) {
	j, err := Open(dir, Options{CommitInterval: 5 * time.Millisecond, Logger: quiet})
	if err != nil {
		fmt.Println("E", err)
		os.Exit(2)
	}
	n, err := j.Count("")
	if err != nil {
		fmt.Println("E", err)
		os.Exit(2)
	}
	base, seen := int(n), uint64(0)
	fmt.Println("S", base)
	for i := base; ; i += 50 {
		fmt.Println("A", i+50)
		for k := i; k < i+50; k++ {
			j.Append(numbered(k))
		}
		if c := j.Health().Committed; c != seen {
			seen = c
			fmt.Println("C", base+int(c))
		}
		time.Sleep(time.Millisecond)
	}
}

// numbered is reading k of the crash test: three channels in turn, 1 ms apart.
func numbered(k int) daq.Reading {
	return daq.Reading{Logger: "rack", Channel: fmt.Sprintf("c%d", k%3), Time: t0.Add(time.Duration(k) * time.Millisecond),
		Celsius: float64(k), Status: daq.StatusOK}
}

type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// TestCrashKill9 kills a real writer process with SIGKILL at random moments and checks,
// after each kill, that the file is intact, that every reading the child saw committed
// is there, and that nothing is there that the child had not appended: the journal holds
// exactly readings 0..N-1 with lastCommitted <= N <= lastAppended.
func TestCrashKill9(t *testing.T) {
	rounds := 20
	if testing.Short() {
		rounds = 5
	}
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(6, 9))
	total := 0
	for round := range rounds {
		committed, appended := killChild(t, dir, time.Duration(20+rng.IntN(250))*time.Millisecond)
		n := checkPrefix(t, dir)
		if n < committed || n > appended {
			t.Fatalf("round %d: journal holds %d readings; child reported %d committed and at most %d appended", round, n, committed, appended)
		}
		if n < total {
			t.Fatalf("round %d: journal holds %d readings, fewer than the %d after the last round", round, n, total)
		}
		t.Logf("round %d: committed %d, on disk %d, appended ≤ %d", round, committed, n, appended)
		total = n
	}
	if total == 0 {
		t.Fatal("no child committed anything: the test proved nothing")
	}
}

// killChild runs the crash helper on dir, kills it with SIGKILL after wait once it has
// started, and returns the last committed and appended counts it printed.
func killChild(t *testing.T, dir string, wait time.Duration) (committed, appended int) {
	t.Helper()
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), crashEnv+"="+dir)
	var out syncBuffer
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Start(); err != nil {
		t.Fatalf("start helper: %v", err)
	}
	deadline := time.Now().Add(10 * time.Second)
	for !strings.Contains(out.String(), "S ") {
		if time.Now().After(deadline) {
			cmd.Process.Kill()
			cmd.Wait()
			t.Fatalf("helper did not start: %q", out.String())
		}
		time.Sleep(time.Millisecond)
	}
	time.Sleep(wait)
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatalf("kill helper: %v", err)
	}
	err := cmd.Wait()
	if ws, ok := cmd.ProcessState.Sys().(syscall.WaitStatus); !ok || !ws.Signaled() || ws.Signal() != syscall.SIGKILL {
		t.Fatalf("helper ended with %v, not SIGKILL; output %q", err, out.String())
	}
	sc := bufio.NewScanner(strings.NewReader(out.String()))
	for sc.Scan() {
		f := strings.Fields(sc.Text())
		if len(f) != 2 {
			continue // a line cut by the kill
		}
		v, err := strconv.Atoi(f[1])
		switch {
		case f[0] == "E":
			t.Fatalf("helper: %s", sc.Text())
		case err != nil:
			continue
		case f[0] == "C":
			committed = max(committed, v)
		case f[0] == "S": // committed by an earlier child
			committed, appended = max(committed, v), max(appended, v)
		case f[0] == "A":
			appended = max(appended, v)
		}
	}
	return committed, appended
}

// checkPrefix opens the file as a plain SQLite database, runs integrity_check and
// checks the readings are exactly 0..N-1 in order; it returns N. Then it opens it as a
// journal to prove the journal restarts on it.
func checkPrefix(t *testing.T, dir string) int {
	t.Helper()
	db, err := sql.Open("sqlite", filepath.Join(dir, FileName))
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var ok string
	if err := db.QueryRow("PRAGMA integrity_check").Scan(&ok); err != nil || ok != "ok" {
		t.Fatalf("integrity_check = %q (%v)", ok, err)
	}
	// Reading i is at t0 + i ms: time order is the order they were appended.
	rows, err := db.Query("SELECT v FROM readings ORDER BY t")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	n := 0
	for rows.Next() {
		var v any
		if err := rows.Scan(&v); err != nil {
			t.Fatal(err)
		}
		c, _, err := decodeValue(v)
		if err != nil {
			t.Fatal(err)
		}
		if c != float64(n) {
			t.Fatalf("reading %d holds %v: a gap or a duplicate", n, c)
		}
		n++
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	j, err := Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatalf("reopen after kill: %v", err)
	}
	if err := j.Close(); err != nil {
		t.Fatalf("close after reopen: %v", err)
	}
	return n
}
