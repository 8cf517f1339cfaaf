package exporter

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"strings"
	"sync"
	"time"
	"unicode"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/internal/httpjson"
)

// MaxAckByLen caps the "by" field of an acknowledgement (initials or a short name).
const MaxAckByLen = 40

// Ack is a technician's acknowledgement that a ready specimen was seen: the page's
// acknowledge button or POST /api/v1/channels/{name}/acknowledge. It belongs to one
// specimen on one position (the fit's segment start), so the next specimen placed
// there starts unacknowledged. It is the journal's record of it, as the API shows it.
type Ack = journal.Ack

// AckOptions configures NewAcks.
type AckOptions struct {
	// Save stores an acknowledgement durably (the daemon: the journal) before it is
	// answered; an error refuses it. Nil keeps acknowledgements in memory only.
	Save func(Ack) error
	// RunOf names the channel's active run, if any (recorded with the acknowledgement).
	RunOf func(channel string) string
	// Restored are acknowledgements kept from before a restart.
	Restored []Ack
}

// Acks holds the newest acknowledgement of each channel. Safe for concurrent use.
type Acks struct {
	opt  AckOptions
	mu   sync.Mutex
	last map[string]Ack
}

// NewAcks returns the acknowledgements table, holding opt.Restored.
func NewAcks(opt AckOptions) *Acks {
	a := &Acks{opt: opt, last: map[string]Ack{}}
	for _, x := range opt.Restored {
		a.keep(x)
	}
	return a
}

func (a *Acks) keep(x Ack) {
	if old, ok := a.last[x.Channel]; !ok || !x.Segment.Before(old.Segment) {
		a.last[x.Channel] = x
	}
}

// Get returns channel's acknowledgement of the specimen whose segment started at
// segment, if there is one.
func (a *Acks) Get(channel string, segment time.Time) (Ack, bool) {
	if a == nil {
		return Ack{}, false
	}
	run := a.runOf(channel)
	a.mu.Lock()
	defer a.mu.Unlock()
	return a.lookup(channel, segment, run)
}

func (a *Acks) runOf(channel string) string {
	if a.opt.RunOf == nil {
		return ""
	}
	return a.opt.RunOf(channel)
}

// lookup finds the acknowledgement of the specimen on channel: the same segment, or,
// within the same run, a segment that starts after the acknowledged one but before the
// acknowledgement (a restarted daemon resumes a long run from its recent readings, so
// the specimen's segment starts later than it did). A segment that starts after the
// acknowledgement is a new specimen. Callers hold mu.
func (a *Acks) lookup(channel string, segment time.Time, run string) (Ack, bool) {
	x, ok := a.last[channel]
	switch {
	case !ok:
		return Ack{}, false
	case x.Segment.Equal(segment):
		return x, true
	case x.RunID != "" && x.RunID == run && segment.After(x.Segment) && segment.Before(x.At):
		return x, true
	}
	return Ack{}, false
}

// Add saves x (first: an error keeps nothing) and keeps it, with the channel's run; an
// existing acknowledgement of the same specimen is returned unchanged. It does not
// check that the specimen is ready: the acknowledge endpoint does. The save runs
// outside the lock, so a slow disk never holds up Get (the API and the page).
func (a *Acks) Add(x Ack) (Ack, error) {
	x.RunID = a.runOf(x.Channel)
	if old, ok := a.Get(x.Channel, x.Segment); ok {
		return old, nil
	}
	if a.opt.Save != nil {
		if err := a.opt.Save(x); err != nil {
			return Ack{}, err
		}
	}
	a.mu.Lock()
	defer a.mu.Unlock()
	if old, ok := a.lookup(x.Channel, x.Segment, x.RunID); ok {
		return old, nil // another screen's press was kept first (the journal keeps the first too)
	}
	a.keep(x)
	return x, nil
}

// AckRequest is the optional body of POST /api/v1/channels/{name}/acknowledge.
type AckRequest struct {
	// By says who saw the specimen (initials or a short name, at most MaxAckByLen
	// characters, printable).
	By string `json:"by"`
}

// readyToHandle reports whether c is what the page shows as ready to handle: no
// fault, a position that holds a specimen, a handling target reached, and the newest
// reading below that target. Only such a channel can be acknowledged.
func readyToHandle(c ChannelJSON) bool {
	if c.Fault != nil || c.Empty || c.Role == "ambient" || c.Forecast == nil || c.Latest == nil || c.Latest.Celsius == nil {
		return false
	}
	for _, t := range c.Targets {
		if t.Kind == "handling" && t.Celsius != nil {
			return t.State == "reached" && *c.Latest.Celsius < *t.Celsius
		}
	}
	return false
}

func (h *Handler) serveAcknowledge(w http.ResponseWriter, r *http.Request) {
	if h.state.Acks == nil {
		httpjson.WriteError(w, http.StatusNotFound, "this server keeps no acknowledgements")
		return
	}
	name := r.PathValue("name")
	ch, ok := findChannel(h.state, name)
	if !ok {
		httpjson.WriteError(w, http.StatusNotFound, "no channel named "+quote(name))
		return
	}
	req, err := decodeAck(r.Body)
	if err != nil {
		httpjson.WriteError(w, ackErrStatus(err), err.Error())
		return
	}
	now := h.opt.Now()
	c := channelJSON(h.state, ch, now)
	if c.Acknowledged != nil {
		httpjson.Write(w, http.StatusOK, c.Acknowledged)
		return
	}
	if !readyToHandle(c) {
		httpjson.WriteError(w, http.StatusConflict, fmt.Sprintf("%s is not ready to handle: only a specimen the readings show below its handling target can be acknowledged", quote(name)))
		return
	}
	a, err := h.state.Acks.Add(Ack{Channel: name, Segment: c.Forecast.SegmentStart, At: now.UTC(), By: req.By})
	if err != nil {
		h.opt.Log.Error("acknowledgement not recorded", "channel", name, "err", err)
		httpjson.WriteError(w, http.StatusServiceUnavailable, "the acknowledgement could not be recorded: "+err.Error())
		return
	}
	h.opt.Log.Info("ready specimen acknowledged", "channel", name, "by", a.By, "run", a.RunID)
	httpjson.Write(w, http.StatusOK, a)
}

var errAckTooBig = errors.New("request body over 64 KiB")

func decodeAck(body io.Reader) (AckRequest, error) {
	var req AckRequest
	dec := json.NewDecoder(body)
	dec.DisallowUnknownFields()
	if err := dec.Decode(&req); err != nil && !errors.Is(err, io.EOF) {
		var tooBig *http.MaxBytesError
		if errors.As(err, &tooBig) {
			return req, errAckTooBig
		}
		return req, fmt.Errorf("body: %w", err)
	}
	// Data after the object is refused by the handler before any route runs.
	req.By = strings.TrimSpace(req.By)
	if len([]rune(req.By)) > MaxAckByLen {
		return req, fmt.Errorf("by: at most %d characters", MaxAckByLen)
	}
	if strings.IndexFunc(req.By, func(r rune) bool { return !unicode.IsPrint(r) }) >= 0 {
		return req, errors.New("by: printable characters only")
	}
	return req, nil
}

func ackErrStatus(err error) int {
	if errors.Is(err, errAckTooBig) {
		return http.StatusRequestEntityTooLarge
	}
	return http.StatusBadRequest
}
