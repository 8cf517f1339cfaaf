package journal

import (
	"errors"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// An acknowledgement is kept across a restart; the first of two for the same specimen
// wins; a read-only journal refuses to store one.
func TestAcknowledgementsSurviveRestart(t *testing.T) {
	dir := t.TempDir()
	j, err := Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	seg := t0.Add(-30 * time.Minute)
	first := Ack{Channel: "p1", Segment: seg, At: t0, By: "AK", RunID: "20260314T083000Z-p1"}
	for _, a := range []Ack{first, {Channel: "p1", Segment: seg, At: t0.Add(time.Minute), By: "ZZ"},
		{Channel: "p2", Segment: seg.Add(time.Minute), At: t0.Add(2 * time.Minute)}} {
		if err := j.Acknowledge(a); err != nil {
			t.Fatal(err)
		}
	}
	j.Close()
	j, err = Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	got, err := j.Acknowledgements(t0.Add(-time.Hour))
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 2 || got[0] != first || got[1].Channel != "p2" || !got[1].Segment.Equal(seg.Add(time.Minute)) {
		t.Fatalf("after restart: %+v, want %+v then p2's", got, first)
	}
	if later, err := j.Acknowledgements(t0.Add(90 * time.Second)); err != nil || len(later) != 1 || later[0].Channel != "p2" {
		t.Errorf("since t0+90s: %+v, %v; want p2's only", later, err)
	}
	if mine, err := j.RunAcknowledgements("20260314T083000Z-p1"); err != nil || len(mine) != 1 || mine[0] != first {
		t.Errorf("the run's acknowledgements: %+v, %v; want %+v", mine, err, first)
	}
	if none, err := j.RunAcknowledgements("no-such-run"); err != nil || len(none) != 0 {
		t.Errorf("another run's acknowledgements: %+v, %v; want none", none, err)
	}
	ro, err := Open(dir, Options{Logger: quiet, ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer ro.Close()
	if err := ro.Acknowledge(Ack{Channel: "p3", Segment: seg, At: t0}); !errors.Is(err, ErrReadOnly) {
		t.Errorf("read-only Acknowledge: %v, want ErrReadOnly", err)
	}
}

// An acknowledgement's segment start is a reading's time: it is stored truncated to the
// Tick as the reading is, so it equals the segment start a restart replays (the
// readings' times come back truncated), and a second press on the same specimen, its
// segment start within that tick, keeps the first.
func TestAcknowledgementSegmentOnTicks(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	seg := t0.Add(-30*time.Minute + 123_456_789) // a host receive time in nanoseconds
	j.Append(daq.Reading{Logger: "rack", Channel: "p1", Time: seg, Celsius: 80, Status: daq.StatusOK})
	mustFlush(t, j)
	for _, a := range []Ack{{Channel: "p1", Segment: seg, At: t0, By: "AK"}, {Channel: "p1", Segment: seg.Add(-23_456), At: t0.Add(time.Second), By: "ZZ"}} {
		if err := j.Acknowledge(a); err != nil {
			t.Fatal(err)
		}
	}
	got, err := j.Acknowledgements(t0.Add(-time.Hour))
	if err != nil {
		t.Fatal(err)
	}
	replayed := collect(t, j, "p1", time.Time{}, time.Time{})
	if len(got) != 1 || got[0].By != "AK" || !got[0].Segment.Equal(t0.Add(-30*time.Minute+123_400_000)) || len(replayed) != 1 || !replayed[0].Time.Equal(got[0].Segment) {
		t.Errorf("acknowledgements %+v, replayed %+v: want AK's alone, its segment at the replayed reading's time 08:30:00.1234", got, replayed)
	}
}
