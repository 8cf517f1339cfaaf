package predict

import (
	"context"
	"runtime"
	"sync"
	"time"
)

// Restore loads a batch of past readings into the bench without fitting after each
// one, then fits every channel once: how a restarted daemon resumes its forecasts from
// the journal in seconds rather than replaying hours of fits. each calls observe for
// every reading in time order (OK readings only, as for Observe).
func (b *Bench) Restore(each func(observe func(channel string, t time.Time, celsius float64))) {
	b.setHold(true)
	each(b.Observe)
	b.setHold(false)
	b.fitAll(runtime.GOMAXPROCS(0))
}

// fitAll fits every channel once, on up to workers goroutines.
func (b *Bench) fitAll(workers int) {
	next := make(chan *Tracker)
	var wg sync.WaitGroup
	for range max(1, workers) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for tr := range next {
				tr.fitNow()
			}
		}()
	}
	for _, tr := range b.trackers {
		next <- tr
	}
	close(next)
	wg.Wait()
}

// Run fits the bench's channels on workers goroutines until ctx ends: a reading that
// makes a fit due hands it to them instead of fitting in Observe, so the caller of
// Observe (the daemon's analysis loop) never waits on a fit and the machine's cores
// share the fits. Each channel is queued at most once at a time. When Run returns,
// fits are back in Observe.
//
// While Run runs, each channel's schedule is aligned once (at its next fit, and again
// at each new segment) to a phase of its own (see Tracker.fitFrom): the channels'
// phases are spread evenly over FitEvery, so the workers get a steady share of the
// fits each second, not every channel at once.
func (b *Bench) Run(ctx context.Context, workers int) {
	queue := make(chan *Tracker, len(b.trackers)) // room for every channel: never blocks
	b.schedule(func(t *Tracker) { queue <- t })
	var wg sync.WaitGroup
	for range max(1, workers) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				select {
				case <-ctx.Done():
					return
				case tr := <-queue:
					tr.fitNow()
				}
			}
		}()
	}
	wg.Wait()
	b.schedule(nil)
}

// schedule hands the channels' due fits to sched, with their phases spread over
// FitEvery (channel i of n at i/n of it); nil puts fits back in Observe, on the plain
// schedule.
func (b *Bench) schedule(sched func(*Tracker)) {
	for i, tr := range b.trackers {
		tr.mu.Lock()
		tr.sched, tr.rephase = sched, sched != nil
		tr.phase = time.Duration(int64(i) * int64(tr.opt.FitEvery) / int64(len(b.trackers)))
		if sched == nil {
			tr.queued = false
		}
		tr.mu.Unlock()
	}
}

// FitPending fits every channel that has readings not yet fitted (see
// Tracker.FitPending) and returns how many it fitted.
func (b *Bench) FitPending() int {
	n := 0
	for _, tr := range b.trackers {
		if tr.FitPending() {
			n++
		}
	}
	return n
}

// busy reports whether any channel has a fit queued or running.
func (b *Bench) busy() bool {
	for _, tr := range b.trackers {
		if tr.busy() {
			return true
		}
	}
	return false
}

func (b *Bench) setHold(on bool) {
	for _, tr := range b.trackers {
		tr.mu.Lock()
		tr.hold = on
		tr.mu.Unlock()
	}
}
