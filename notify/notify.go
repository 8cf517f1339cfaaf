package notify

import (
	"fmt"
	"log/slog"
	"net/http"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/settle-lab/settle/internal/jsonval"
)

// Kind is the kind of an event.
type Kind string

// The event kinds. A webhook's config `events` selects among the first three; test
// events are sent on request to every webhook.
const (
	// KindReached: a channel reached a target.
	KindReached Kind = "reached"
	// KindSoon: a target's predicted crossing is within the webhook's lead time.
	KindSoon Kind = "soon"
	// KindFault: a channel entered a fault (open thermocouple, stale data, lost port, ...).
	KindFault Kind = "fault"
	// KindTest: a test event requested through the API.
	KindTest Kind = "test"
)

// Channel is one channel as Observe sees it.
type Channel struct {
	// Name is the channel name.
	Name string
	// Now is the time of the channel's newest reading: the data's own clock, against
	// which lead times are measured.
	Now time.Time
	// Celsius is the newest valid temperature, or NaN.
	Celsius float64
	// Segment is the start of the fitted segment (zero before the first fit).
	Segment time.Time
	// Targets are the forecasts of the channel's targets.
	Targets []Target
	// Fault is the current fault kind ("" when none), FaultSince when it began and
	// FaultDetail a sentence about it.
	Fault, FaultDetail string
	FaultSince         time.Time
}

// Target is one target's forecast as Observe sees it.
type Target struct {
	// Name is the target's name.
	Name string
	// State is the forecast state ("predicted", "reached", ...; see predict.State).
	State string
	// Handling marks a safe-to-handle target: its events carry the handling cautions.
	Handling bool
	// Celsius is the target temperature, or NaN.
	Celsius float64
	// At is the predicted or observed crossing; Earliest and Latest bound a prediction.
	At, Earliest, Latest time.Time
	// Due is the time to plan with: for a handling target the interval's late bound,
	// else At (zero: use At, except for a predicted handling target, whose open-ended
	// interval — Latest zero — has no time to plan with).
	Due time.Time
}

// due is the target's Due, or At where Due is not set; zero for a predicted
// handling target with an open-ended interval (no "soon" event: only "not before
// Earliest" is known).
func (t Target) due() time.Time {
	if t.Due.IsZero() {
		if t.Handling && t.State == "predicted" && t.Latest.IsZero() {
			return time.Time{}
		}
		return t.At
	}
	return t.Due
}

// Event is the JSON body POSTed to a webhook.
type Event struct {
	// ID is the deduplication key: the same event always has the same ID.
	ID string `json:"id"`
	// Kind is reached, soon, fault or test.
	Kind Kind `json:"kind"`
	// Webhook names the receiving webhook.
	Webhook string `json:"webhook"`
	// Channel and Target name what the event is about (Target is empty for faults).
	Channel string `json:"channel,omitempty"`
	Target  string `json:"target,omitempty"`
	// Message is one human-readable sentence.
	Message string `json:"message"`
	// Time is the time of the channel's newest reading when the event was detected.
	Time time.Time `json:"time"`
	// At, Earliest and Latest are the target's crossing and its interval, where known.
	At       *time.Time `json:"at,omitempty"`
	Earliest *time.Time `json:"earliest,omitempty"`
	Latest   *time.Time `json:"latest,omitempty"`
	// Celsius is the channel's newest temperature and TargetCelsius the target's.
	Celsius       *float64 `json:"celsius,omitempty"`
	TargetCelsius *float64 `json:"target_celsius,omitempty"`
	// Fault is the fault kind of a fault event.
	Fault string `json:"fault,omitempty"`
	// Cautions accompany every event about a safe-to-handle target.
	Cautions []string `json:"cautions,omitempty"`
}

// Options tunes a Notifier; the zero value gives the defaults stated per field.
type Options struct {
	// Log receives delivery failures (default: slog.Default()).
	Log *slog.Logger
	// Registerer gets the notification counters (nil: not registered).
	Registerer prometheus.Registerer
	// Client posts the events (default: a client with a 10 s timeout).
	Client *http.Client
	// Attempts is how many times an event is tried before it is given up (default 5).
	Attempts int
	// Backoff is the wait before the first retry, doubled after each (default 2 s),
	// up to MaxBackoff (default 5 min). Each wait is jittered by ±20 %.
	Backoff, MaxBackoff time.Duration
	// Queue is how many events may wait per webhook (default 64); more are dropped.
	Queue int
	// Cautions are attached to events about safe-to-handle targets.
	Cautions []string
}

// Notifier turns channel snapshots into webhook events and delivers them. Observe and
// Test may be called from any goroutine; Run delivers.
type Notifier struct {
	opt                   Options
	hooks                 []*hook
	sent, failed, dropped *prometheus.CounterVec

	mu sync.Mutex // guards every hook's dedupe state
}

// hook is one webhook's queue and deduplication state.
type hook struct {
	cfg    Webhook
	kinds  map[Kind]bool
	queue  chan Event
	seen   map[string]map[string]bool // channel → keys of the current segment
	seg    map[string]time.Time       // channel → segment the keys belong to
	faults map[string]string          // channel → key of the fault being reported
}

// New returns a notifier for the configured webhooks. It registers its counters with
// opt.Registerer and panics if they are already registered there (a wiring bug).
func New(webhooks []Webhook, opt Options) *Notifier {
	opt = withDefaults(opt)
	vec := func(name, help string) *prometheus.CounterVec {
		return prometheus.NewCounterVec(prometheus.CounterOpts{Name: name, Help: help}, []string{"webhook"})
	}
	n := &Notifier{
		opt:     opt,
		sent:    vec("settle_notify_sent_total", "Notifications delivered to the webhook (2xx answer)."),
		failed:  vec("settle_notify_failures_total", "Notification delivery attempts to the webhook that failed."),
		dropped: vec("settle_notify_dropped_total", "Notifications given up after every retry failed, or dropped from a full queue."),
	}
	for _, w := range webhooks {
		h := &hook{cfg: w, kinds: kinds(w.Events), queue: make(chan Event, opt.Queue),
			seen: map[string]map[string]bool{}, seg: map[string]time.Time{}, faults: map[string]string{}}
		n.hooks = append(n.hooks, h)
		for _, v := range []*prometheus.CounterVec{n.sent, n.failed, n.dropped} {
			v.WithLabelValues(w.Name)
		}
	}
	if opt.Registerer != nil {
		opt.Registerer.MustRegister(n.sent, n.failed, n.dropped)
	}
	return n
}

func withDefaults(opt Options) Options {
	if opt.Log == nil {
		opt.Log = slog.Default()
	}
	if opt.Client == nil {
		opt.Client = &http.Client{Timeout: 10 * time.Second}
	}
	if opt.Attempts <= 0 {
		opt.Attempts = 5
	}
	if opt.Backoff <= 0 {
		opt.Backoff = 2 * time.Second
	}
	if opt.MaxBackoff <= 0 {
		opt.MaxBackoff = 5 * time.Minute
	}
	if opt.Queue <= 0 {
		opt.Queue = 64
	}
	return opt
}

// kinds parses a webhook's event selection; empty selects every kind.
func kinds(events []string) map[Kind]bool {
	out := map[Kind]bool{KindTest: true}
	if len(events) == 0 {
		events = EventKinds
	}
	for _, e := range events {
		out[Kind(e)] = true
	}
	return out
}

// Observe compares a snapshot of every channel with what each webhook has been sent
// and queues the new events.
func (n *Notifier) Observe(chs []Channel) {
	n.mu.Lock()
	defer n.mu.Unlock()
	for _, h := range n.hooks {
		for _, ch := range chs {
			for _, ev := range h.events(ch, n.opt.Cautions) {
				n.enqueue(h, ev)
			}
		}
	}
}

// events returns the events of ch that h has not been sent yet, and marks them sent.
func (h *hook) events(ch Channel, cautions []string) []Event {
	var out []Event
	if !h.seg[ch.Name].Equal(ch.Segment) {
		h.seg[ch.Name], h.seen[ch.Name] = ch.Segment, map[string]bool{}
	}
	seen := h.seen[ch.Name]
	if seen == nil {
		seen = map[string]bool{}
		h.seen[ch.Name] = seen
	}
	for _, tg := range ch.Targets {
		kind, ok := h.targetKind(ch, tg)
		if !ok {
			continue
		}
		key := fmt.Sprintf("%s/%s/%s/%d", ch.Name, tg.Name, kind, ch.Segment.Unix())
		if seen[key] {
			continue
		}
		seen[key] = true
		out = append(out, targetEvent(key, kind, ch, tg, cautions))
	}
	if ev, ok := h.faultEvent(ch); ok {
		out = append(out, ev)
	}
	return out
}

// targetKind says which event, if any, a target's forecast calls for.
func (h *hook) targetKind(ch Channel, tg Target) (Kind, bool) {
	switch {
	case tg.State == "reached" && h.kinds[KindReached]:
		return KindReached, true
	case tg.State == "predicted" && h.kinds[KindSoon] && h.cfg.LeadTime > 0 &&
		tg.due().After(ch.Now) && tg.due().Sub(ch.Now) <= h.cfg.LeadTime:
		return KindSoon, true
	}
	return "", false
}

// faultEvent returns an event when ch has entered a fault it was not in; a channel
// that recovers is re-armed.
func (h *hook) faultEvent(ch Channel) (Event, bool) {
	if ch.Fault == "" {
		delete(h.faults, ch.Name)
		return Event{}, false
	}
	key := fmt.Sprintf("%s//%s:%s/%d", ch.Name, KindFault, ch.Fault, ch.FaultSince.Unix())
	if h.faults[ch.Name] == key || !h.kinds[KindFault] {
		h.faults[ch.Name] = key
		return Event{}, false
	}
	h.faults[ch.Name] = key
	return Event{ID: key, Kind: KindFault, Channel: ch.Name, Time: ch.Now.UTC(), Fault: ch.Fault,
		Celsius: jsonval.Num(ch.Celsius),
		Message: fmt.Sprintf("%s: fault %s: %s", ch.Name, ch.Fault, ch.FaultDetail)}, true
}

func targetEvent(key string, kind Kind, ch Channel, tg Target, cautions []string) Event {
	ev := Event{ID: key, Kind: kind, Channel: ch.Name, Target: tg.Name, Time: ch.Now.UTC(),
		At: jsonval.Time(tg.At), Earliest: jsonval.Time(tg.Earliest), Latest: jsonval.Time(tg.Latest),
		Celsius: jsonval.Num(ch.Celsius), TargetCelsius: jsonval.Num(tg.Celsius)}
	if tg.Handling {
		ev.Cautions = cautions
	}
	temp := "its target"
	if v := jsonval.Num(tg.Celsius); v != nil {
		temp = fmt.Sprintf("%.1f °C", *v)
	}
	if kind == KindReached {
		ev.Message = fmt.Sprintf("%s reached %s (%s).", ch.Name, tg.Name, temp)
	} else if tg.Handling {
		ev.Message = fmt.Sprintf("%s is expected below %s (%s) by %s UTC with high confidence, in about %s (central estimate %s UTC).",
			ch.Name, tg.Name, temp, tg.due().UTC().Format(time.TimeOnly), tg.due().Sub(ch.Now).Round(time.Minute),
			tg.At.UTC().Format(time.TimeOnly))
	} else if tg.Latest.IsZero() {
		ev.Message = fmt.Sprintf("%s is expected to reach %s (%s) in about %s (not before %s UTC; it may settle short of it).",
			ch.Name, tg.Name, temp, tg.At.Sub(ch.Now).Round(time.Minute), tg.Earliest.UTC().Format(time.TimeOnly))
	} else {
		ev.Message = fmt.Sprintf("%s is expected to reach %s (%s) in about %s (between %s and %s UTC).",
			ch.Name, tg.Name, temp, tg.At.Sub(ch.Now).Round(time.Minute),
			tg.Earliest.UTC().Format(time.TimeOnly), tg.Latest.UTC().Format(time.TimeOnly))
	}
	if tg.Handling {
		ev.Message += " This is an estimate: verify before handling."
	}
	return ev
}

// Test queues a test event to the webhook named name, or to every webhook when name
// is empty, and returns how many were queued.
func (n *Notifier) Test(name string, now time.Time) (int, error) {
	n.mu.Lock()
	defer n.mu.Unlock()
	count := 0
	for _, h := range n.hooks {
		if name != "" && h.cfg.Name != name {
			continue
		}
		id := fmt.Sprintf("test/%s/%d", h.cfg.Name, now.UnixNano())
		if n.enqueue(h, Event{ID: id, Kind: KindTest, Time: now.UTC(),
			Message: "Test notification from settle: this webhook is reachable."}) {
			count++
		}
	}
	if name != "" && count == 0 {
		return 0, fmt.Errorf("notify: no webhook named %q (config notify.webhooks[].name), or its queue is full", name)
	}
	return count, nil
}

// enqueue adds ev to h's queue if h wants its kind; a full queue drops it.
func (n *Notifier) enqueue(h *hook, ev Event) bool {
	if !h.kinds[ev.Kind] {
		return false
	}
	ev.Webhook = h.cfg.Name
	select {
	case h.queue <- ev:
		return true
	default:
		n.dropped.WithLabelValues(h.cfg.Name).Inc()
		n.opt.Log.Error("notification dropped: queue full", "webhook", h.cfg.Name, "event", ev.ID)
		return false
	}
}

// Webhooks returns the names of the configured webhooks.
func (n *Notifier) Webhooks() []string {
	var out []string
	for _, h := range n.hooks {
		out = append(out, h.cfg.Name)
	}
	return out
}
