package daq

import (
	"context"
	"errors"
	"fmt"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq/ptytest"
)

// waitFor polls cond every 10 ms until it holds or a generous deadline passes. The
// deadline is a hang guard, not a speed assertion.
func waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("timed out waiting until %s", what)
		}
		time.Sleep(10 * time.Millisecond)
	}
}

func nextReading(t *testing.T, out <-chan Reading) Reading {
	t.Helper()
	select {
	case r := <-out:
		return r
	case <-time.After(10 * time.Second):
		t.Fatal("no reading arrived")
		return Reading{}
	}
}

// nextLine returns the three readings of one line, checking their channels.
func nextLine(t *testing.T, out <-chan Reading) [3]Reading {
	t.Helper()
	var line [3]Reading
	for i, ch := range []string{"S1", "S2", "amb"} {
		line[i] = nextReading(t, out)
		if line[i].Channel != ch {
			t.Fatalf("reading %d is channel %q, want %q", i, line[i].Channel, ch)
		}
	}
	return line
}

// TestLineSourcePTY drives the line source through a real pseudo-terminal behind a
// symlink: readings and times, a garbled line, unplug and replug at the same path.
func TestLineSourcePTY(t *testing.T) {
	link := ptytest.NewLink(t)
	src := rackSource(t, link.Path)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan Reading, 64)
	done := make(chan error, 1)
	go func() { done <- src.Run(ctx, out) }()
	waitFor(t, "the port is up", func() bool { return src.Stats().Up })

	before := time.Now()
	link.PTY().WriteLine(t, "100.0,846.2,198.7,22.0")
	first := nextLine(t, out)
	if first[0].Celsius != 846.2 || first[1].Celsius != 198.7 || first[2].Celsius != 22.0 {
		t.Errorf("first line = %+v, want 846.2, 198.7, 22.0", first)
	}
	if first[0].Time.Before(before) || first[0].Time.After(time.Now()) {
		t.Errorf("first reading time %v is not its receive time", first[0].Time)
	}

	link.PTY().WriteLine(t, "102.0,#garbled")
	link.PTY().WriteLine(t, "104.0,839.9,198.4,22.1")
	second := nextLine(t, out)
	if got := second[0].Time.Sub(first[0].Time); got != 4*time.Second || second[0].Celsius != 839.9 {
		t.Errorf("line after the garbled one: %v °C at +%v, want 839.9 °C at +4s (logger clock)", second[0].Celsius, got)
	}
	if st := src.Stats(); st.ParseErrors != 1 || st.LastReading.Before(before) {
		t.Errorf("stats after garbled line = %+v, want 1 parse error and a last-reading time", st)
	}

	link.Unplug()
	waitFor(t, "the source sees the unplug and retries", func() bool {
		st := src.Stats()
		return !st.Up && st.Failed && st.Reconnects >= 1 && st.ReadErrors >= 1
	})

	time.Sleep(2500 * time.Millisecond) // long enough for the reopen backoff to reach its cap
	p := link.Replug()
	replugged := time.Now()
	waitFor(t, "the port is up again", func() bool { return src.Stats().Up })
	if src.Stats().Failed {
		t.Error("port still marked failed after it reopened")
	}
	p.WriteLine(t, "106.0,833.0,198.1,22.0")
	third := nextLine(t, out)
	// Measured, not asserted (speed claims live in benchmarks and the backoff test).
	t.Logf("readings resumed %v after the replug", time.Since(replugged).Round(time.Millisecond))
	if got := third[0].Time.Sub(first[0].Time); got != 6*time.Second || third[0].Celsius != 833.0 {
		t.Errorf("after replug: %v °C at +%v, want 833.0 °C at +6s", third[0].Celsius, got)
	}

	cancel()
	if err := <-done; !errors.Is(err, context.Canceled) {
		t.Errorf("Run returned %v, want context.Canceled", err)
	}
	if src.Stats().Up {
		t.Error("port still marked up after Run returned")
	}
}

// TestLineSourcePTYBurst checks that many lines written at once all arrive in order.
func TestLineSourcePTYBurst(t *testing.T) {
	link := ptytest.NewLink(t)
	src := rackSource(t, link.Path)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan Reading, 16)
	go src.Run(ctx, out)
	waitFor(t, "the port is up", func() bool { return src.Stats().Up })
	const n = 200
	go func() {
		for i := range n {
			fmt.Fprintf(link.PTY().Master, "%d.0,%d.5,1,2\n", 2*i, i)
		}
	}()
	for i := range n {
		l := nextLine(t, out)
		if l[0].Celsius != float64(i)+0.5 {
			t.Fatalf("line %d: S1 = %v, want %v", i, l[0].Celsius, float64(i)+0.5)
		}
	}
}
