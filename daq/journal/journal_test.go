package journal

import (
	"database/sql"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

func TestRoundTrip(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	want := []daq.Reading{
		reading("c1", 0),
		{Logger: "rack", Channel: "c1", Time: t0.Add(time.Second + 123456789), Celsius: math.NaN(), Status: daq.StatusOpen, Raw: "OPEN"},
		reading("c2", 1),
		reading("c1", 2),
	}
	for _, r := range want {
		j.Append(r)
	}
	if h := j.Health(); h.Pending != 4 || h.Committed != 0 {
		t.Fatalf("before flush: pending %d committed %d, want 4 and 0", h.Pending, h.Committed)
	}
	mustFlush(t, j)
	got := collect(t, j, "c1", time.Time{}, time.Time{})
	if len(got) != 3 {
		t.Fatalf("c1 has %d readings, want 3", len(got))
	}
	// A time comes back truncated to the journal's Tick: 1.123456789 s as 1.1234 s.
	for i, w := range []daq.Reading{want[0], want[1], want[3]} {
		g := got[i]
		w.Time = Truncate(w.Time)
		if !g.Time.Equal(w.Time) || g.Status != w.Status || g.Raw != w.Raw || g.Logger != w.Logger ||
			!(g.Celsius == w.Celsius || math.IsNaN(g.Celsius) && math.IsNaN(w.Celsius)) {
			t.Errorf("reading %d = %+v, want %+v", i, g, w)
		}
	}
	if got := collect(t, j, "c1", t0.Add(time.Second), t0.Add(2*time.Second)); len(got) != 1 || got[0].Status != daq.StatusOpen {
		t.Errorf("c1 in [1 s, 2 s) = %+v, want the open-circuit reading only", got)
	}
	latest, err := j.Latest()
	if err != nil {
		t.Fatal(err)
	}
	if r := latest["c1"]; !r.Time.Equal(want[3].Time) || r.Celsius != want[3].Celsius {
		t.Errorf("latest c1 = %+v, want %+v", r, want[3])
	}
	if r := latest["c2"]; !r.Time.Equal(want[2].Time) {
		t.Errorf("latest c2 = %+v, want %+v", r, want[2])
	}
	var order []string
	if err := j.Replay(t0.Add(time.Second), func(r daq.Reading) { order = append(order, r.Channel+"@"+r.Time.Sub(t0).String()) }); err != nil {
		t.Fatal(err)
	}
	if w := []string{"c1@1.1234s", "c2@1s", "c1@2s"}; len(order) != 3 || order[0] != "c2@1s" || order[1] != w[0] || order[2] != w[2] {
		t.Errorf("replay order %v, want [c2@1s c1@1.1234s c1@2s]", order)
	}
	if h := j.Health(); !h.Writable || h.Committed != 4 || h.Pending != 0 || h.LastCommit.IsZero() {
		t.Errorf("health after flush = %+v", h)
	}
}

func TestReopenKeepsDataAndSchema(t *testing.T) {
	dir := t.TempDir()
	j, err := Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	for i := range 100 {
		j.Append(reading("c1", i))
	}
	if err := j.Close(); err != nil {
		t.Fatalf("Close: %v", err)
	}
	j, err = Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	if n, err := j.Count("c1"); err != nil || n != 100 {
		t.Fatalf("after reopen: %d readings (%v), want 100 (Close must flush)", n, err)
	}
	db, err := sql.Open("sqlite", filepath.Join(dir, FileName))
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var v int
	var mode string
	if err := db.QueryRow("PRAGMA user_version").Scan(&v); err != nil || v != SchemaVersion {
		t.Errorf("user_version = %d (%v), want %d", v, err, SchemaVersion)
	}
	if err := db.QueryRow("PRAGMA journal_mode").Scan(&mode); err != nil || mode != "wal" {
		t.Errorf("journal_mode = %q (%v), want wal", mode, err)
	}
}

func TestSchemaTooNew(t *testing.T) {
	dir := t.TempDir()
	db, err := sql.Open("sqlite", filepath.Join(dir, FileName))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.Exec("PRAGMA user_version = 99"); err != nil {
		t.Fatal(err)
	}
	db.Close()
	_, err = Open(dir, Options{Logger: quiet})
	if !errors.Is(err, ErrSchemaTooNew) {
		t.Fatalf("Open on version 99: %v, want ErrSchemaTooNew", err)
	}
	_, err = Open(dir, Options{Logger: quiet, ReadOnly: true})
	if !errors.Is(err, ErrSchemaTooNew) {
		t.Fatalf("read-only Open on version 99: %v, want ErrSchemaTooNew", err)
	}
}

func TestReadOnlyWhileWriting(t *testing.T) {
	w, dir := open(t, Options{CommitInterval: 5 * time.Millisecond})
	for i := range 50 {
		w.Append(reading("c1", i))
	}
	mustFlush(t, w)
	r, err := Open(dir, Options{ReadOnly: true, Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	for i := 50; i < 100; i++ {
		w.Append(reading("c1", i))
	}
	mustFlush(t, w)
	if n, err := r.Count("c1"); err != nil || n != 100 {
		t.Errorf("reader sees %d readings (%v), want 100", n, err)
	}
	r.Append(reading("c1", 100))
	if h := r.Health(); h.Dropped != 1 {
		t.Errorf("append on read-only journal: dropped %d, want 1", h.Dropped)
	}
	if _, err := r.StartRun(RunSpec{Channel: "c1", Specimen: "s"}); !errors.Is(err, ErrReadOnly) {
		t.Errorf("StartRun on read-only journal: %v, want ErrReadOnly", err)
	}
}

func TestQueueCapCountsDrops(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour, QueueCap: 10, BatchSize: 1000})
	for i := range 15 {
		j.Append(reading("c1", i))
	}
	if h := j.Health(); h.Pending != 10 || h.Dropped != 5 {
		t.Fatalf("pending %d dropped %d, want 10 and 5", h.Pending, h.Dropped)
	}
}

// BenchmarkAppend measures sustained throughput: Append from one goroutine while the
// writer commits in batches with synchronous=FULL. The goal (issue 6) is at least
// 50,000 readings/s with flat memory: allocs/op must stay O(1).
func BenchmarkAppend(b *testing.B) {
	j, _ := open(b, Options{})
	chans := []string{"c1", "c2", "c3", "c4", "c5", "c6", "c7", "c8"}
	b.ReportAllocs()
	b.ResetTimer()
	for i := range b.N {
		j.Append(reading(chans[i%len(chans)], i))
		for i%4096 == 0 && j.Health().Pending > 4*8192 {
			time.Sleep(time.Millisecond) // let the writer catch up: measure the sustained rate
		}
	}
	if err := j.Flush(); err != nil {
		b.Fatal(err)
	}
	b.StopTimer()
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "readings/s")
	if h := j.Health(); h.Committed != uint64(b.N) || h.Dropped != 0 {
		b.Fatalf("committed %d dropped %d of %d", h.Committed, h.Dropped, b.N)
	}
}

// BenchmarkReplay measures how fast a restarting daemon reads the journal back
// (readings/s), e.g. 16 channels × 6 h at 1 Hz is 345,600 readings.
func BenchmarkReplay(b *testing.B) {
	j, _ := open(b, Options{})
	const n = 100_000
	for i := range n {
		j.Append(reading(fmt.Sprintf("c%d", i%16), i))
	}
	if err := j.Flush(); err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for range b.N {
		got := 0
		if err := j.Replay(t0, func(daq.Reading) { got++ }); err != nil || got != n {
			b.Fatalf("replayed %d (%v), want %d", got, err, n)
		}
	}
	b.ReportMetric(float64(n*b.N)/b.Elapsed().Seconds(), "readings/s")
}

// TestAppendAfterClose: a reading appended after Close is counted as dropped (nothing
// would ever write it), and Flush does not reopen the file.
func TestAppendAfterClose(t *testing.T) {
	j, _ := open(t, Options{})
	j.Append(reading("c1", 0))
	if err := j.Close(); err != nil {
		t.Fatal(err)
	}
	for i := range 10 {
		j.Append(reading("c1", i+1))
	}
	if h := j.Health(); h.Dropped != 10 || h.Pending != 0 || h.Committed != 1 {
		t.Errorf("after Close: %+v, want 10 dropped, 0 pending, 1 committed", h)
	}
	if err := j.Flush(); !errors.Is(err, ErrClosed) {
		t.Errorf("Flush after Close = %v, want ErrClosed", err)
	}
}

// TestCloseFoldsTheLog: a clean close folds the write-ahead log into the database, so
// the record is one file (what a backup or a copy to another machine takes).
func TestCloseFoldsTheLog(t *testing.T) {
	dir := t.TempDir()
	j, err := Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	for i := range 2000 {
		j.Append(reading("c1", i))
	}
	if err := j.Flush(); err != nil {
		t.Fatal(err)
	}
	if _, err := j.Count(""); err != nil { // the reader's connection is open too
		t.Fatal(err)
	}
	if err := j.Close(); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(j.Path() + "-wal"); !os.IsNotExist(err) {
		t.Errorf("after Close the write-ahead log is still there (%v)", err)
	}
	j, err = Open(dir, Options{Logger: quiet, ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	if n, err := j.Count(""); err != nil || n != 2000 {
		t.Errorf("reopened: %d readings (%v), want 2000", n, err)
	}
}
