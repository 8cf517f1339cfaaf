package main

import (
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/predict"
)

// TestConfiguredRunWaitsForTheDisk: a configured run that cannot start because the data
// folder is unusable (a late mount, a file in its place) is kept and started once the
// folder works, instead of being lost for the daemon's lifetime.
func TestConfiguredRunWaitsForTheDisk(t *testing.T) {
	base := t.TempDir()
	blocker := filepath.Join(base, "mnt")
	if err := os.WriteFile(blocker, []byte("not a directory yet"), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg := &config.Config{DataDir: filepath.Join(blocker, "settle"), Channels: []config.Channel{
		{Name: "disc-3", Run: &config.Run{Specimen: "S-3"}},
	}}
	rec, err := openRecorder(cfg, []predict.ChannelSpec{{Name: "disc-3"}}, slog.New(slog.NewTextHandler(io.Discard, nil)))
	if err != nil {
		t.Fatal(err)
	}
	defer rec.close()
	if len(rec.pendingConfigured) != 1 {
		t.Fatalf("pending configured runs = %d, want 1 while the folder is unusable", len(rec.pendingConfigured))
	}
	if err := os.Remove(blocker); err != nil { // the disk "arrives"
		t.Fatal(err)
	}
	// What maintain does every second; the journal reopens the folder on its own
	// schedule, so this may take a round or two (the deadline only guards a hang).
	for end := time.Now().Add(15 * time.Second); len(rec.pendingConfigured) > 0 && time.Now().Before(end); {
		time.Sleep(200 * time.Millisecond)
		rec.startConfigured(rec.pendingConfigured)
	}
	if len(rec.pendingConfigured) != 0 {
		t.Fatalf("still pending after the folder recovered: %v", rec.pendingConfigured)
	}
	if id, ok := rec.j.ActiveRunID("disc-3"); !ok || id == "" {
		t.Error("no active run for disc-3 after the retry")
	}
}

// TestAcknowledgementsKeptByTheJournal: an acknowledgement made through the daemon's
// table is in the journal with the channel's run, and a restarted daemon shows it.
func TestAcknowledgementsKeptByTheJournal(t *testing.T) {
	cfg := &config.Config{DataDir: t.TempDir()}
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	rec, err := openRecorder(cfg, []predict.ChannelSpec{{Name: "bar-2"}}, log)
	if err != nil {
		t.Fatal(err)
	}
	seg := time.Now().Add(-time.Hour).UTC().Truncate(time.Millisecond)
	run, err := rec.j.StartRun(journal.RunSpec{Channel: "bar-2", Specimen: "Q-12", Start: seg})
	if err != nil {
		t.Fatal(err)
	}
	want, err := rec.acks().Add(exporter.Ack{Channel: "bar-2", Segment: seg, At: seg.Add(50 * time.Minute), By: "AK"})
	if err != nil || want.RunID != run.ID {
		t.Fatalf("acknowledge: %+v, %v; want run %s", want, err, run.ID)
	}
	rec.close()
	rec, err = openRecorder(cfg, []predict.ChannelSpec{{Name: "bar-2"}}, log)
	if err != nil {
		t.Fatal(err)
	}
	defer rec.close()
	if got, ok := rec.acks().Get("bar-2", seg); !ok || got != want {
		t.Errorf("after a restart: %+v (%v), want %+v", got, ok, want)
	}
}
