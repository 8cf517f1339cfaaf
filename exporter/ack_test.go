package exporter

import (
	"encoding/json"
	"errors"
	"math"
	"net/http"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/internal/httpjson"
	"github.com/settle-lab/settle/predict"
)

// ackState has a ready specimen (steel: handling target reached, newest reading 41 °C
// below 50 °C), a hot one, an empty position and a room sensor.
func ackState(segment time.Time) State {
	handle := predict.Target{Name: "handle", Celsius: 50, Handling: true}
	now := t0.Add(40 * time.Minute)
	fc := func(state predict.State, empty bool) *predict.Forecast {
		return &predict.Forecast{Model: "lumped", SegmentStart: segment, FittedAt: now, Empty: empty, Ambient: 21,
			Targets: []predict.TargetForecast{{Target: handle, Celsius: 50, State: state, At: now.Add(-5 * time.Minute)}}}
	}
	l := NewLatest()
	l.now = func() time.Time { return now }
	for ch, c := range map[string]float64{"steel": 41, "brass": 96, "p3": 21.4, "room": 21.2} {
		l.Record(daq.Reading{Channel: ch, Time: now, Celsius: c})
	}
	return State{Latest: l, Bench: fakeBench{
		{Name: "steel", Forecast: fc(predict.StateReached, false)},
		{Name: "brass", Forecast: fc(predict.StatePredicted, false)},
		{Name: "p3", Forecast: fc(predict.StateEmpty, true)},
		{Name: "room", Role: predict.RoleAmbient, LastCelsius: math.NaN()},
	}}
}

func TestAcknowledge(t *testing.T) {
	seg := t0.Add(-2 * time.Hour)
	s := ackState(seg)
	var saved []Ack
	fail := false
	s.Acks = NewAcks(AckOptions{
		Save: func(a Ack) error {
			if fail {
				return errors.New("disk full")
			}
			saved = append(saved, a)
			return nil
		},
		RunOf: func(ch string) string { return "run-" + ch },
	})
	h := newTestHandler(s, Options{Token: "tok", Now: func() time.Time { return t0.Add(40*time.Minute + 10*time.Second) }})
	const bearer = "Bearer tok"
	for _, c := range []struct {
		name, ch, auth, body string
		status               int
		msg                  string
	}{
		{"no token", "steel", "", "", http.StatusUnauthorized, "send Authorization"},
		{"unknown channel", "steal", bearer, "", http.StatusNotFound, `no channel named "steal"`},
		{"hot specimen", "brass", bearer, "", http.StatusConflict, "not ready to handle"},
		{"empty position", "p3", bearer, "", http.StatusConflict, "not ready to handle"},
		{"room sensor", "room", bearer, "", http.StatusConflict, "not ready to handle"},
		{"unknown field", "steel", bearer, `{"who":"AK"}`, http.StatusBadRequest, `unknown field "who"`},
		{"trailing data", "steel", bearer, `{"by":"AK"} {}`, http.StatusBadRequest, "after the JSON value"},
		{"long name", "steel", bearer, `{"by":"` + strings.Repeat("x", 41) + `"}`, http.StatusBadRequest, "at most 40"},
		{"control character", "steel", bearer, `{"by":"A\u0007K"}`, http.StatusBadRequest, "printable"},
	} {
		w := do(t, h, "POST", "/api/v1/channels/"+c.ch+"/acknowledge", c.auth, c.body)
		var e httpjson.Error
		_ = json.Unmarshal(w.Body.Bytes(), &e)
		if w.Code != c.status || !strings.Contains(e.Error, c.msg) {
			t.Errorf("%s: %d %s, want %d with %q", c.name, w.Code, w.Body, c.status, c.msg)
		}
	}
	// A ready specimen whose readings stopped (stale) is not ready to acknowledge.
	late := newTestHandler(s, Options{Token: "tok", Now: func() time.Time { return t0.Add(42 * time.Minute) }})
	if w := do(t, late, "POST", "/api/v1/channels/steel/acknowledge", bearer, ""); w.Code != http.StatusConflict {
		t.Errorf("stale readings: %d %s, want 409", w.Code, w.Body)
	}
	if len(saved) != 0 {
		t.Fatalf("refused requests saved %+v", saved)
	}
	// The store fails: the answer says so and nothing is claimed.
	fail = true
	if w := do(t, h, "POST", "/api/v1/channels/steel/acknowledge", bearer, `{"by":"AK"}`); w.Code != http.StatusServiceUnavailable || !strings.Contains(w.Body.String(), "disk full") {
		t.Errorf("failing store: %d %s", w.Code, w.Body)
	}
	if got := channelsOf(t, h)["steel"].Acknowledged; got != nil {
		t.Errorf("an acknowledgement that was not stored shows as %+v", got)
	}
	fail = false
	w := do(t, h, "POST", "/api/v1/channels/steel/acknowledge", bearer, `{"by":" AK "}`)
	want := Ack{Channel: "steel", Segment: seg, At: t0.Add(40*time.Minute + 10*time.Second), By: "AK", RunID: "run-steel"}
	var got Ack
	if err := json.Unmarshal(w.Body.Bytes(), &got); err != nil || w.Code != http.StatusOK || got != want {
		t.Fatalf("acknowledge: %d %s (%v), want %+v", w.Code, w.Body, err, want)
	}
	if len(saved) != 1 || saved[0] != want {
		t.Errorf("saved %+v, want %+v", saved, want)
	}
	// A second press (another screen) keeps the first and stores nothing more.
	if w := do(t, h, "POST", "/api/v1/channels/steel/acknowledge", bearer, `{"by":"ZZ"}`); w.Code != http.StatusOK || !strings.Contains(w.Body.String(), `"by": "AK"`) || len(saved) != 1 {
		t.Errorf("second acknowledgement: %d %s, saved %d", w.Code, w.Body, len(saved))
	}
	chs := channelsOf(t, h)
	if a := chs["steel"].Acknowledged; a == nil || *a != want {
		t.Errorf("API shows steel acknowledged %+v, want %+v", a, want)
	}
	if chs["brass"].Acknowledged != nil {
		t.Errorf("brass shows acknowledged")
	}
	// The next specimen on the position (a new segment) starts unacknowledged; a
	// restart restores the acknowledgement of the one still there.
	next := ackState(want.At.Add(10 * time.Minute)) // placed after the acknowledgement
	next.Acks = s.Acks
	if a := channelsOf(t, newTestHandler(next, Options{Now: h.opt.Now}))["steel"].Acknowledged; a != nil {
		t.Errorf("new specimen on steel inherits %+v", a)
	}
	// A restarted daemon resumes a long run from its recent readings: the specimen's
	// segment starts later than the acknowledged one, before the acknowledgement. Same
	// run: still acknowledged. A segment after the acknowledgement: a new specimen.
	runOf := func(string) string { return "run-steel" }
	for _, c := range []struct {
		segment time.Time
		want    bool
	}{{seg.Add(30 * time.Minute), true}, {want.At.Add(time.Minute), false}} {
		resumed := ackState(c.segment)
		resumed.Acks = NewAcks(AckOptions{Restored: saved, RunOf: runOf})
		if a := channelsOf(t, newTestHandler(resumed, Options{Now: h.opt.Now})); (a["steel"].Acknowledged != nil) != c.want {
			t.Errorf("segment from %v, same run: acknowledged %+v, want %v", c.segment, a["steel"].Acknowledged, c.want)
		}
	}
	again := ackState(seg)
	again.Acks = NewAcks(AckOptions{Restored: saved})
	if a := channelsOf(t, newTestHandler(again, Options{Now: h.opt.Now}))["steel"].Acknowledged; a == nil || *a != want {
		t.Errorf("after a restart steel shows %+v, want %+v", a, want)
	}
}

type channelMap map[string]ChannelJSON

func channelsOf(t *testing.T, h http.Handler) channelMap {
	t.Helper()
	w := do(t, h, "GET", "/api/v1/channels", "", "")
	var resp ChannelsResponse
	if err := json.Unmarshal(w.Body.Bytes(), &resp); err != nil {
		t.Fatalf("channels: %v in %s", err, w.Body)
	}
	out := channelMap{}
	for _, c := range resp.Channels {
		out[c.Name] = c
	}
	return out
}
