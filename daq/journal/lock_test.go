package journal

import (
	"errors"
	"fmt"
	"os"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// A second writer on the same data directory is refused with the directory and the
// holder's pid; once the first closes, the directory can be opened again. A reader
// (reports, export) is never refused.
func TestSecondWriterRefused(t *testing.T) {
	j, dir := open(t, Options{})
	_, err := Open(dir, Options{Logger: quiet})
	if !errors.Is(err, ErrLocked) {
		t.Fatalf("second Open: %v, want ErrLocked", err)
	}
	for _, want := range []string{dir, fmt.Sprintf("pid %d", os.Getpid()), "data_dir"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error %q does not say %q", err, want)
		}
	}
	j.Append(reading("c1", 0))
	mustFlush(t, j)
	ro, err := Open(dir, Options{ReadOnly: true, Logger: quiet})
	if err != nil {
		t.Fatalf("read-only Open while a writer runs: %v", err)
	}
	ro.Close()
	j.Close()
	again, err := Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatalf("Open after Close: %v", err)
	}
	again.Close()
}

// Restatus changes the status of a reading already committed, or appended in the
// same batch, and leaves the others alone.
func TestRestatus(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	for i := range 5 {
		j.Append(reading("c1", i))
	}
	mustFlush(t, j)
	spike := reading("c1", 2)
	spike.Status, spike.Raw = daq.StatusSpike, "20.002"
	j.Restatus(spike)
	j.Append(reading("c1", 5))
	stuck := reading("c1", 5)
	stuck.Status = daq.StatusStuck
	j.Restatus(stuck)
	mustFlush(t, j)
	got := collect(t, j, "c1", time.Time{}, time.Time{})
	want := []daq.Status{daq.StatusOK, daq.StatusOK, daq.StatusSpike, daq.StatusOK, daq.StatusOK, daq.StatusStuck}
	if len(got) != len(want) {
		t.Fatalf("%d readings, want %d", len(got), len(want))
	}
	for i, r := range got {
		if r.Status != want[i] {
			t.Errorf("reading %d: status %s, want %s", i, r.Status, want[i])
		}
	}
	if got[2].Raw != "20.002" {
		t.Errorf("spike raw %q, want 20.002", got[2].Raw)
	}
}

// ReplayStarts bounds each channel's replay to its newest perChannel readings at the
// mark, and ReplayBefore leaves out readings committed after the mark.
func TestReplayBoundedAtMark(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	for i := range 100 {
		j.Append(reading("fast", i))
	}
	for i := range 5 {
		j.Append(reading("slow", i*20))
	}
	mustFlush(t, j)
	mark, err := j.LastSeq()
	if err != nil {
		t.Fatal(err)
	}
	j.Append(reading("fast", 100)) // after the mark: live, not replayed
	mustFlush(t, j)
	starts, err := j.ReplayStarts(t0, mark, 10)
	if err != nil {
		t.Fatal(err)
	}
	if want := reading("fast", 90).Time; !starts["fast"].Equal(want) {
		t.Errorf("fast starts at %v, want the 10th newest %v", starts["fast"], want)
	}
	if !starts["slow"].Equal(t0) {
		t.Errorf("slow (5 readings) starts at %v, want since %v", starts["slow"], t0)
	}
	got := map[string]int{}
	err = j.ReplayBefore(t0, mark, func(r daq.Reading) bool {
		if !r.Time.Before(starts[r.Channel]) {
			got[r.Channel]++
		}
		return true
	})
	if err != nil || got["fast"] != 10 || got["slow"] != 5 {
		t.Errorf("replayed %v (%v), want fast 10 and slow 5", got, err)
	}
}
