package main

import (
	"fmt"
	"testing"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/daq/ptytest"
)

// A logger without a clock is stamped with the host's nanosecond clock; the journal
// keeps times to 100 µs (journal.Tick). The daemon truncates each time as it receives
// the reading, so the fit's newest reading live is at a time the journal gives back
// exactly (a segment start, a forecast's time, an acknowledgement match the record),
// and a restart resumes at the journal's newest reading.
func TestLiveTimesAreTheJournals(t *testing.T) {
	p := ptytest.Open(t)
	dir := t.TempDir()
	cfg := func(path string) *config.Config {
		return &config.Config{Listen: "127.0.0.1:0", DataDir: dir,
			Loggers: []config.Logger{{Logger: daq.Logger{Name: "rack", Port: path, Format: "line", Line: daq.LineFormat{
				Columns: []daq.Column{{Index: 1, Channel: "plate-1"}}}}}},
			Channels: []config.Channel{{Name: "plate-1", Targets: []config.Target{{Name: "handling", Celsius: ptrTo(50.0), Handling: true}}}}}
	}
	d, stop := runDaemonAt(t, cfg(p.Path()))
	for i := range 12 {
		fmt.Fprintf(p.Master, "%.2f\n", 300-float64(i))
		time.Sleep(30 * time.Millisecond)
	}
	var live time.Time
	for end := time.Now().Add(5 * time.Second); time.Now().Before(end); time.Sleep(20 * time.Millisecond) {
		if live = lastTime(d); !live.IsZero() {
			break
		}
	}
	if err := d.rec.j.Flush(); err != nil {
		t.Fatal(err)
	}
	var stored []time.Time
	for r, err := range d.rec.j.Readings("plate-1", time.Time{}, time.Time{}) {
		if err != nil {
			t.Fatal(err)
		}
		stored = append(stored, r.Time)
	}
	stop()
	if live.IsZero() || !journal.Truncate(live).Equal(live) {
		t.Fatalf("the fit's newest reading live is at %v, want a time on a whole 100 µs", live.Format(time.RFC3339Nano))
	}
	found := false
	for _, at := range stored {
		found = found || at.Equal(live)
	}
	if !found {
		t.Errorf("the fit's newest reading live (%v) is none of the journal's %d reading times", live.Format(time.RFC3339Nano), len(stored))
	}

	d2, stop2 := runDaemonAt(t, cfg(ptytest.Open(t).Path()))
	defer stop2()
	if got := lastTime(d2); len(stored) == 0 || !got.Equal(stored[len(stored)-1]) {
		t.Errorf("after restart the fit's newest reading is at %v, want the journal's newest %v", got.Format(time.RFC3339Nano), stored)
	}
}
