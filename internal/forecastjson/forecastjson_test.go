package forecastjson

import (
	"encoding/json"
	"math"
	"testing"
	"time"

	"github.com/settle-lab/settle/predict"
)

var t0 = time.Date(2026, 3, 14, 9, 0, 0, 0, time.UTC)

// TestTargetForecastNulls: a target with no forecast yet has null times; a handling
// target's due time is the interval's late bound (predict.TargetForecast.Due).
// Expected JSON written by hand from the inputs (no outside source: our own format).
func TestTargetForecastNulls(t *testing.T) {
	for _, tc := range []struct {
		name string
		tf   predict.TargetForecast
		want string
	}{
		{"insufficient", predict.TargetForecast{Target: predict.Target{Name: "settled", Celsius: math.NaN(), Within: 2},
			Celsius: math.NaN(), State: predict.StateInsufficient},
			`{"name":"settled","kind":"settle","celsius":null,"state":"insufficient","at":null,"earliest":null,"latest":null,"due":null,"estimated":false}`},
		{"handling", predict.TargetForecast{Target: predict.Target{Name: "handle", Celsius: 45, Handling: true},
			Celsius: 45, State: predict.StatePredicted, At: t0.Add(time.Minute), Earliest: t0, Latest: t0.Add(2 * time.Minute)},
			`{"name":"handle","kind":"handling","celsius":45,"state":"predicted","at":"2026-03-14T09:01:00Z","earliest":"2026-03-14T09:00:00Z","latest":"2026-03-14T09:02:00Z","due":"2026-03-14T09:02:00Z","estimated":false}`},
		// An open-ended interval ("not before"): no late end, so no time to plan
		// handling with, even beside a central estimate.
		{"handling, not before", predict.TargetForecast{Target: predict.Target{Name: "handle", Celsius: 45, Handling: true},
			Celsius: 45, State: predict.StatePredicted, At: t0.Add(time.Minute), Earliest: t0},
			`{"name":"handle","kind":"handling","celsius":45,"state":"predicted","at":"2026-03-14T09:01:00Z","earliest":"2026-03-14T09:00:00Z","latest":null,"due":null,"estimated":false}`},
		{"not before, no central estimate", predict.TargetForecast{Target: predict.Target{Name: "test", Celsius: 30},
			Celsius: 30, State: predict.StatePredicted, Earliest: t0},
			`{"name":"test","kind":"temperature","celsius":30,"state":"predicted","at":null,"earliest":"2026-03-14T09:00:00Z","latest":null,"due":null,"estimated":false}`},
	} {
		b, err := json.Marshal(NewTargetForecast(tc.tf))
		if err != nil || string(b) != tc.want {
			t.Errorf("%s: %s, %v\nwant %s", tc.name, b, err, tc.want)
		}
	}
}

// TestFileFitAxis: `settle fit --json` gives times in seconds on the file's axis, and
// a handling target carries predict's cautions.
// Expected seconds worked by hand: origin is t0 − 10 s.
func TestFileFitAxis(t *testing.T) {
	origin := t0.Add(-10 * time.Second) // the file's t_s = 0
	f := &predict.Forecast{Model: "lumped", Biot: math.NaN(), Params: []predict.Param{{Name: "tau_s", Value: 600}, {Name: "x", Value: math.NaN()}},
		Targets: []predict.TargetForecast{{Target: predict.Target{Name: "handle", Celsius: 45, Handling: true}, Celsius: 45,
			State: predict.StatePredicted, At: t0.Add(100 * time.Second), Earliest: t0.Add(90 * time.Second), Latest: t0.Add(120 * time.Second)}}}
	got := NewFileFit(f, origin, 50)
	tg := got.Targets[0]
	if got.Biot != nil || len(got.Parameters) != 1 || got.Parameters["tau_s"] != 600 || got.UntilS != 50 {
		t.Errorf("fit %+v: want biot null and only tau_s = 600", got)
	}
	if *tg.TS != 110 || *tg.EarliestS != 100 || *tg.LatestS != 130 || *tg.DueS != 130 || len(tg.Cautions) != len(predict.HandlingCautions) {
		t.Errorf("target %+v: want t_s 110, interval 100 to 130, due 130 and the cautions", tg)
	}
}

// TestForecastUpdatedAt: a forecast re-anchored by later readings says so beside its
// fit time, with how far it moved (lead_s); one straight from a fit (settle fit, a
// report: UpdatedAt zero) is updated when fitted. Expected values are the inputs (our
// own format).
func TestForecastUpdatedAt(t *testing.T) {
	for _, tc := range []struct {
		name    string
		updated time.Time
		lead    time.Duration
		want    time.Time
	}{
		{"re-anchored", t0.Add(17 * time.Second), -2500 * time.Millisecond, t0.Add(17 * time.Second)},
		{"as fitted", time.Time{}, 0, t0},
	} {
		f := &predict.Forecast{Model: "lumped", FittedAt: t0, UpdatedAt: tc.updated, Lead: tc.lead, Biot: math.NaN()}
		got := NewForecast(f)
		if !got.FittedAt.Equal(t0) || !got.UpdatedAt.Equal(tc.want) || got.LeadS != tc.lead.Seconds() {
			t.Errorf("%s: fitted_at %v, updated_at %v, lead_s %v; want %v, %v and %v", tc.name, got.FittedAt, got.UpdatedAt, got.LeadS, t0, tc.want, tc.lead.Seconds())
		}
	}
}

// TestFileFitOpenEnded: an open-ended interval keeps its early bound on the file's axis
// and has null for the late end, the due time and (no central estimate) t_s, never
// a time computed from a zero one. Expected seconds worked by hand: origin is t0 − 10 s.
func TestFileFitOpenEnded(t *testing.T) {
	origin := t0.Add(-10 * time.Second)
	f := &predict.Forecast{Model: "lumped", Biot: math.NaN(), Targets: []predict.TargetForecast{{
		Target: predict.Target{Name: "handle", Celsius: 45, Handling: true}, Celsius: 45,
		State: predict.StatePredicted, Earliest: t0.Add(90 * time.Second)}}}
	tg := NewFileFit(f, origin, 50).Targets[0]
	if tg.EarliestS == nil || *tg.EarliestS != 100 || tg.LatestS != nil || tg.DueS != nil || tg.TS != nil {
		t.Errorf("target %+v: want earliest 100 and null t_s, latest and due", tg)
	}
}
