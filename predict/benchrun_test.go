package predict

import (
	"context"
	"fmt"
	"math"
	"sync"
	"testing"
	"time"
)

// TestBenchRunFitsOnWorkers feeds many channels while the bench's fit workers run and
// the snapshot is read concurrently (run under -race): every channel ends with a
// forecast of its latest segment, and Observe never fitted in the caller.
func TestBenchRunFitsOnWorkers(t *testing.T) {
	const channels, readings = 24, 400
	specs := make([]ChannelSpec, channels)
	for i := range specs {
		specs[i] = ChannelSpec{Name: fmt.Sprintf("c%02d", i), Targets: []Target{{Name: "handle", Celsius: 50, Handling: true}}}
	}
	b := NewBench(specs, TrackerOptions{FitEvery: 20 * time.Second})
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan struct{})
	go func() { b.Run(ctx, 3); close(done) }()
	var wg sync.WaitGroup
	wg.Add(1)
	go func() { // a scraper
		defer wg.Done()
		for ctx.Err() == nil {
			_ = b.Snapshot()
			time.Sleep(time.Millisecond)
		}
	}()
	for s := range readings {
		at := t0.Add(time.Duration(s) * 5 * time.Second)
		for i, sp := range specs {
			b.Observe(sp.Name, at, 22+float64(150+i)*math.Exp(-float64(s)*5/900))
		}
	}
	// Let the workers finish what is queued, then fit whatever is left once.
	deadline := time.Now().Add(time.Minute) // a hang guard, not a speed assertion
	for time.Now().Before(deadline) && !allFitted(b, readings) {
		b.FitPending() // as the daemon's maintenance loop does every second
		time.Sleep(10 * time.Millisecond)
	}
	cancel()
	<-done
	wg.Wait()
	b.FitPending()
	for _, ch := range b.Snapshot() {
		if ch.Forecast == nil || ch.Forecast.Empty || ch.Forecast.Points < readings-10 {
			t.Errorf("%s: forecast %+v", ch.Name, ch.Forecast)
			continue
		}
		if st := ch.Forecast.Targets[0].State; st != StatePredicted && st != StateReached {
			t.Errorf("%s: handling %s", ch.Name, st)
		}
	}
}

func allFitted(b *Bench, n int) bool {
	for _, ch := range b.Snapshot() {
		if ch.Forecast == nil || ch.Forecast.Points < n-10 {
			return false
		}
	}
	return true
}

// BenchmarkBenchChannels measures the analysis cost of a rack: channels cooling with a
// fitted ambient, one reading a second each, fitted on the schedule a daemon uses
// (every 10 s of readings) on the bench's workers. One op is one simulated second of
// every channel. It reports the process CPU time per channel-second (the fits
// included: it waits for the workers), so 1e9 divided by it is how many channels one
// core keeps up with.
func BenchmarkBenchChannels(b *testing.B) {
	for _, channels := range []int{16, 128} {
		b.Run(fmt.Sprint(channels), func(b *testing.B) {
			specs := make([]ChannelSpec, channels)
			for i := range specs {
				specs[i] = ChannelSpec{Name: fmt.Sprint(i), Targets: []Target{{Name: "handle", Celsius: 50, Handling: true}}}
			}
			bench := NewBench(specs, TrackerOptions{})
			ctx, cancel := context.WithCancel(context.Background())
			done := make(chan struct{})
			go func() { bench.Run(ctx, 2); close(done) }()
			c0 := cpuTime()
			b.ResetTimer()
			for s := range b.N {
				at := t0.Add(time.Duration(s) * time.Second)
				for i, sp := range specs {
					bench.Observe(sp.Name, at, 22+float64(100+i)*math.Exp(-float64(s%3600)/1200))
				}
			}
			for bench.busy() {
				time.Sleep(time.Millisecond)
			}
			b.StopTimer()
			cpu := cpuTime() - c0
			cancel()
			<-done
			b.ReportMetric(float64(cpu.Nanoseconds())/float64(b.N*channels), "cpu-ns/channel-s")
		})
	}
}
