package exporter

import (
	"context"
	"log/slog"
	"math"
	"time"

	"github.com/settle-lab/settle/notify"
	"github.com/settle-lab/settle/predict"
)

// Run polls the state every PollInterval until ctx ends: changed forecasts and faults
// go to the event stream, and every snapshot to the notifier, whose deliveries Run
// also drives. NewServer calls it; a handler used without a Server needs it called.
func (h *Handler) Run(ctx context.Context) {
	done := make(chan struct{})
	go func() { h.notifier.Run(ctx); close(done) }()
	defer func() { <-done }()
	tick := time.NewTicker(h.opt.PollInterval)
	defer tick.Stop()
	w := watcher{forecasts: map[string]string{}, faults: map[string]string{}}
	for {
		h.poll(&w)
		select {
		case <-ctx.Done():
			return
		case <-tick.C:
		}
	}
}

// CloseStreams ends every event stream (NewServer calls it at Shutdown) and stops
// passing readings to the stream.
func (h *Handler) CloseStreams() {
	h.broker.close()
	if h.unsub != nil {
		h.unsub()
	}
}

func (h *Handler) logger() *slog.Logger { return h.opt.Log }

// watcher remembers what the last poll saw, to publish only changes.
type watcher struct {
	forecasts map[string]string // channel → fingerprint of its fit and target states
	faults    map[string]string // channel → fault kind
}

// poll takes one snapshot of the engine, publishes what changed in the API's view and
// feeds the notifier the engine's own state.
func (h *Handler) poll(w *watcher) {
	now := h.opt.Now()
	var states []predict.ChannelState
	if h.state.Bench != nil {
		states = h.state.Bench.Snapshot()
	}
	chs := make([]notify.Channel, 0, len(states))
	s := portsOnce(h.state)
	for _, st := range states {
		ch := channelJSON(s, st, now)
		if fp := fingerprint(ch); fp != w.forecasts[ch.Name] {
			w.forecasts[ch.Name] = fp
			h.broker.publish("forecast", ch)
		}
		kind := ""
		if ch.Fault != nil {
			kind = ch.Fault.Kind
		}
		if kind != w.faults[ch.Name] {
			w.faults[ch.Name] = kind
			h.broker.publish("fault", FaultEvent{Channel: ch.Name, Fault: ch.Fault})
		}
		chs = append(chs, h.notifyChannel(st, ch.Fault))
	}
	h.notifier.Observe(chs)
}

// fingerprint identifies a channel's fit and target forecasts.
func fingerprint(ch ChannelJSON) string {
	if ch.Forecast == nil {
		return ""
	}
	fp := ch.Forecast.FittedAt.String() + ch.Forecast.Model
	for _, t := range ch.Targets {
		fp += "|" + t.State
		if t.At != nil {
			fp += t.At.String()
		}
	}
	return fp
}

// notifyChannel is what the notifier watches of one channel: the engine's state st,
// the channel's newest reading and its fault f (nil: none).
func (h *Handler) notifyChannel(st predict.ChannelState, f *FaultJSON) notify.Channel {
	out := notify.Channel{Name: st.Name, Celsius: math.NaN()}
	if h.state.Latest != nil {
		if r, ok := h.state.Latest.Get(st.Name); ok {
			out.Now = r.Time.UTC()
			if r.OK() && finite(r.Celsius) {
				out.Celsius = r.Celsius
			}
		}
	}
	if f != nil {
		out.Fault, out.FaultDetail = f.Kind, f.Detail
		if f.Since != nil {
			out.FaultSince = *f.Since
		}
	}
	fc := st.Forecast
	if fc == nil {
		return out
	}
	if !fc.Empty {
		out.Segment = fc.SegmentStart.UTC()
	}
	for _, tf := range fc.Targets {
		nt := notify.Target{Name: tf.Target.Name, State: string(tf.State), Handling: tf.Target.Handling, Celsius: math.NaN(),
			At: tf.At.UTC(), Earliest: tf.Earliest.UTC(), Latest: tf.Latest.UTC(), Due: tf.Due().UTC()}
		if finite(tf.Celsius) {
			nt.Celsius = tf.Celsius
		}
		out.Targets = append(out.Targets, nt)
	}
	return out
}
