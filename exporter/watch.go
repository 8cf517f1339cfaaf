package exporter

import (
	"context"
	"log/slog"
	"math"
	"time"

	"github.com/settle-lab/settle/notify"
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

// poll takes one snapshot, publishes what changed and feeds the notifier.
func (h *Handler) poll(w *watcher) {
	resp := Channels(h.state, h.opt.Now())
	chs := make([]notify.Channel, 0, len(resp.Channels))
	for _, ch := range resp.Channels {
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
		chs = append(chs, notifyChannel(ch))
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

// notifyChannel converts the API view of a channel into the notifier's.
func notifyChannel(ch ChannelJSON) notify.Channel {
	out := notify.Channel{Name: ch.Name, Celsius: math.NaN()}
	if ch.Latest != nil {
		out.Now = ch.Latest.Time
		if ch.Latest.Celsius != nil {
			out.Celsius = *ch.Latest.Celsius
		}
	}
	if ch.Forecast != nil {
		out.Segment = ch.Forecast.SegmentStart
	}
	if f := ch.Fault; f != nil {
		out.Fault, out.FaultDetail = f.Kind, f.Detail
		if f.Since != nil {
			out.FaultSince = *f.Since
		}
	}
	for _, t := range ch.Targets {
		nt := notify.Target{Name: t.Name, State: t.State, Handling: t.Kind == "handling", Celsius: math.NaN()}
		if t.Celsius != nil {
			nt.Celsius = *t.Celsius
		}
		nt.At, nt.Earliest, nt.Latest, nt.Due = deref(t.At), deref(t.Earliest), deref(t.Latest), deref(t.Due)
		out.Targets = append(out.Targets, nt)
	}
	return out
}

func deref(t *time.Time) time.Time {
	if t == nil {
		return time.Time{}
	}
	return *t
}
