package predict

import "time"

// Restore loads a batch of past readings into the bench without fitting after each
// one, then fits every channel once: how a restarted daemon resumes its forecasts from
// the journal in seconds rather than replaying hours of fits. each calls observe for
// every reading in time order (OK readings only, as for Observe).
func (b *Bench) Restore(each func(observe func(channel string, t time.Time, celsius float64))) {
	b.setHold(true)
	each(b.Observe)
	b.setHold(false)
	for _, tr := range b.trackers {
		tr.Fit()
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

func (b *Bench) setHold(on bool) {
	for _, tr := range b.trackers {
		tr.mu.Lock()
		tr.hold = on
		tr.mu.Unlock()
	}
}
