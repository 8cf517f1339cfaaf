package predict

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"
)

// A 20 mm steel bar (our own case; ρc·V/A = 7850·434·0.005 J/(m²·K)) from 400 °C under
// a fan of 25 W/(m²·K) with emissivity 0.4, in a 22 °C room, read every 5 s with
// 0.1 K of noise for 10 minutes: the share lies between the candidates 15 and 40
// W/(m²·K). The refined share must recover the coefficient within 10 % and put the
// room within 1 K, nearer than the grid's best. A self-consistency check: the curve
// is the engine's own law (integrated by RK4 apart from the fit, simulateH); no
// outside source.
func TestRefineMovingShareRecovers(t *testing.T) {
	law := DefaultSurfaceLaw
	law.ForcedH, law.Emissivity = 25, 0.4
	p := simulateH(law, 7850*434*0.005, 22, 400, 5, 600)
	p.Celsius = noisy(rand.New(rand.NewPCG(71, 72)), p.Celsius, 0.1)
	lr, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	_, moving := hCandidates(nil)
	like := sharedModels(p, &lr)
	grid := fitHBest(p, &lr, moving, like)
	if grid == nil {
		t.Fatal("no moving-air fit")
	}
	r, note := refineMovingShare(p, &lr, grid, like)
	if r == grid || !r.shareFitted || !strings.Contains(note, "Radiation's share fitted") {
		t.Fatalf("share not refined (grid's best %.0f W/(m²·K), room %.2f °C); note %q", grid.Law.ForcedH, grid.Ambient, note)
	}
	if math.Abs(r.Law.ForcedH-25) > 2.5 || math.Abs(r.Ambient-22) > 1 || !(math.Abs(r.Ambient-22) < math.Abs(grid.Ambient-22)) {
		t.Errorf("refined %.1f W/(m²·K), room %.2f °C; grid's best %.0f W/(m²·K), room %.2f °C; want 25 ± 2.5 and 22 ± 1, nearer than the grid",
			r.Law.ForcedH, r.Ambient, grid.Law.ForcedH, grid.Ambient)
	}
	t.Logf("refined %.2f W/(m²·K), room %.2f °C; grid %.0f, room %.2f °C", r.Law.ForcedH, r.Ambient, grid.Law.ForcedH, grid.Ambient)
	if r.Law.Emissivity != 0.4 {
		t.Errorf("emissivity %.3g, want the candidates' 0.4 kept (only the ratio is fitted)", r.Law.Emissivity)
	}
}

// Moving air chosen for an unknown specimen by a narrow margin is a guess: a
// predicted handling target is left "not before" its early bound, with no central
// estimate and no late end, and a note says why; other targets keep their interval.
// Still air, or moving air chosen clearly, leaves them alone.
func TestGuessedAirHandling(t *testing.T) {
	at := t0.Add(10 * time.Minute)
	targets := func() []TargetForecast {
		return []TargetForecast{
			{Target: Target{Name: "handle", Celsius: 50, Handling: true}, State: StatePredicted, At: at, Earliest: at.Add(-time.Minute), Latest: at.Add(time.Minute)},
			{Target: Target{Name: "level", Celsius: 60}, State: StatePredicted, At: at, Earliest: at.Add(-time.Minute), Latest: at.Add(time.Minute)},
		}
	}
	fan, still := DefaultSurfaceLaw, DefaultSurfaceLaw
	fan.ForcedH = 30
	for _, c := range []struct {
		name    string
		law     SurfaceLaw
		guessed bool
		open    bool
	}{
		{"moving air, narrow margin", fan, true, true},
		{"moving air, clear margin", fan, false, false},
		{"still air", still, true, false},
	} {
		tfs := targets()
		note := guessedAirHandling(tfs, hFitted{&HResult{Law: c.law}}, c.guessed)
		h, l := tfs[0], tfs[1]
		if c.open {
			if !h.At.IsZero() || !h.Latest.IsZero() || !h.Earliest.Equal(at.Add(-time.Minute)) || !strings.Contains(note, "\"not before\" only") {
				t.Errorf("%s: handling %v–%v at %v, note %q; want \"not before\" %v only, with a note", c.name, h.Earliest, h.Latest, h.At, note, at.Add(-time.Minute))
			}
		} else if !h.At.Equal(at) || !h.Latest.Equal(at.Add(time.Minute)) || note != "" {
			t.Errorf("%s: handling at %v to %v, note %q; want it unchanged", c.name, h.At, h.Latest, note)
		}
		if !l.At.Equal(at) || !l.Latest.Equal(at.Add(time.Minute)) {
			t.Errorf("%s: the non-handling target changed: at %v to %v", c.name, l.At, l.Latest)
		}
	}
}
