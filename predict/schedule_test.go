package predict

import (
	"fmt"
	"math"
	"slices"
	"testing"
	"time"
)

// scheduleCounts feeds a bench of channels whose segments all start at once (a rack
// loaded together), one reading a second each for seconds, and counts the fits that
// come due in each second and each channel's fits. A due fit is taken as done at once
// (fitNow's bookkeeping without the fit: this counts the schedule, not the fits'
// cost). phased spreads the channels' phases as a running Bench does; otherwise they
// share one phase, the plain schedule's bursts.
func scheduleCounts(t *testing.T, channels, seconds int, phased bool) (perSecond []int, perChannel map[*Tracker][]time.Time) {
	t.Helper()
	specs := make([]ChannelSpec, channels)
	for i := range specs {
		specs[i] = ChannelSpec{Name: fmt.Sprintf("c%04d", i), Targets: []Target{{Name: "handle", Celsius: 50, Handling: true}}}
	}
	b := NewBench(specs, TrackerOptions{})
	var due []*Tracker
	b.schedule(func(tr *Tracker) { due = append(due, tr) })
	if !phased { // every channel on one phase: the plain schedule's bursts
		for _, tr := range b.trackers {
			tr.phase = 0
		}
	}
	perChannel = map[*Tracker][]time.Time{}
	for s := range seconds {
		at := t0.Add(time.Duration(s) * time.Second)
		due = due[:0]
		for i, sp := range specs {
			b.Observe(sp.Name, at, 22+float64(150+i%100)*math.Exp(-float64(s)/900))
		}
		if s == seconds/2 { // runs start on every channel at once (a placement detected)
			for _, sp := range specs {
				b.SetPlaced(sp.Name, true)
			}
		}
		perSecond = append(perSecond, len(due))
		for _, tr := range due {
			tr.mu.Lock()
			tr.fitAt, tr.newPts, tr.queued = tr.fitFrom(), 0, false
			tr.mu.Unlock()
			perChannel[tr] = append(perChannel[tr], at)
		}
	}
	return perSecond, perChannel
}

// On a running Bench, 1,000 channels placed at once come due at most 100 a second
// (1,000 over FitEvery's 10 s) once their first fits are done, instead of all 1,000 in
// the same second every 10 s (the plain schedule, counted alongside), and again after
// runs start on all of them at once (each refits at once, then keeps to its phase);
// every channel fits first at 10 s, then 5 to 15 s later (its phase), then every 10 s
// of readings until the runs start. (Counts of the schedule's own rule; no outside source.)
func TestPhasedFitsSpreadOverFitEvery(t *testing.T) {
	const channels, seconds = 1000, 120
	plain, _ := scheduleCounts(t, channels, seconds, false)
	phased, fits := scheduleCounts(t, channels, seconds, true)
	if got := slices.Max(plain[20:]); got != channels {
		t.Errorf("plain schedule: at most %d fits due in one second, want all %d (the case phases fix)", got, channels)
	}
	half := seconds / 2
	for _, span := range [][2]int{{20, half}, {half + 20, seconds}} {
		if got := slices.Max(phased[span[0]:span[1]]); got > channels/10 {
			t.Errorf("phased: %d fits due in one second in seconds %d–%d, want at most %d", got, span[0], span[1], channels/10)
		}
	}
	t.Logf("%d channels placed at once: most fits due in one second after 20 s: plain schedule %d, phased %d",
		channels, slices.Max(plain[20:]), slices.Max(phased[20:half]))
	if len(fits) != channels {
		t.Fatalf("phased: %d channels fitted, want %d", len(fits), channels)
	}
	for tr, at := range fits {
		if gap := at[1].Sub(at[0]); at[0].Sub(t0) != 10*time.Second || gap < 5*time.Second || gap > 15*time.Second {
			t.Errorf("first fits %v and %v after the start, want at 10 s and 5–15 s after", at[0].Sub(t0), at[1].Sub(t0))
		}
		for i := 2; i < len(at) && at[i].Sub(t0) < time.Duration(half)*time.Second; i++ {
			if gap := at[i].Sub(at[i-1]); gap != 10*time.Second {
				t.Errorf("phase %v: fits at %v and %v, %v apart; want 10 s after the first two", tr.phase, at[i-1].Sub(t0), at[i].Sub(t0), gap)
				break
			}
		}
	}
}
