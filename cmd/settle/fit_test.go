package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/settle-lab/settle/internal/forecastjson"
	"github.com/settle-lab/settle/predict"
)

// runFit runs `settle fit` with args through the root command, as a user would.
func runFit(t *testing.T, args ...string) (string, error) {
	t.Helper()
	root := newRootCmd()
	var out, stderr bytes.Buffer
	root.SetOut(&out)
	root.SetErr(&stderr) // progress of a slow fit (under -race) must not reach the JSON
	root.SetArgs(append([]string{"fit"}, args...))
	err := root.Execute()
	return out.String(), err
}

// writeCurve writes a t_s,temp_c[,ambient_c] CSV of fn every step seconds up to end.
func writeCurve(t *testing.T, step, end float64, fn func(s float64) string) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("t_s,temp_c\n")
	for s := 0.0; s <= end; s += step {
		fmt.Fprintf(&b, "%g,%s\n", s, fn(s))
	}
	path := filepath.Join(t.TempDir(), "curve.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

// exponential is our own test curve: 20 + 180·exp(−t/600) °C, 0.1 °C steps.
func exponential(s float64) float64 { return 20 + 180*math.Exp(-s/600) }

func decodeFit(t *testing.T, out string) (forecastjson.FileFit, map[string]json.RawMessage) {
	t.Helper()
	var got forecastjson.FileFit
	var raw map[string]json.RawMessage
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatalf("output is not JSON: %v\n%s", err, out)
	}
	if err := json.Unmarshal([]byte(out), &raw); err != nil {
		t.Fatal(err)
	}
	return got, raw
}

// The JSON keys and states are the contract of issue 3 item 8.
func TestFitJSONContract(t *testing.T) {
	path := writeCurve(t, 5, 3600, func(s float64) string {
		if s == 100 {
			return "" // a missing reading
		}
		if s == 105 {
			return "open" // a non-numeric one
		}
		return fmt.Sprintf("%.1f", exponential(s))
	})
	// Until 900 s the curve has lost 78 % of its excess, but its readings have not
	// visibly settled (the last quarter still falls at a third of the first quarter's
	// rate): a target below the fitted ambient is not unreachable until they have
	// (checked at 1500 s below), but open-ended: "not before" a time, with no late end,
	// no central estimate and no due time (the fitted curve never crosses it).
	out, err := runFit(t, path, "--json", "--until", "900", "--target", "hot=150", "--target", "handle=50",
		"--target", "cold=10", "--settle-band", "1")
	if err != nil {
		t.Fatalf("fit: %v\n%s", err, out)
	}
	got, raw := decodeFit(t, out)
	keys := make([]string, 0, len(raw))
	for k := range raw {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	if want := "biot model notes parameters targets until_s"; strings.Join(keys, " ") != want {
		t.Errorf("keys %v, want %s", keys, want)
	}
	if got.Model != "lumped" || got.UntilS != 900 || got.Biot != nil || len(got.Targets) != 4 {
		t.Fatalf("model %q until %g biot %v targets %d; want lumped, 900, null, 4", got.Model, got.UntilS, got.Biot, len(got.Targets))
	}
	if tau := got.Parameters["tau_s"]; math.Abs(tau-600) > 6 {
		t.Errorf("tau_s %g, want 600 within 1 %%", tau)
	}
	// hot=150 was crossed at 600·ln(180/130) = 195.3 s: reached at the first reading
	// across it (200 s); handle=50 is predicted at 600·ln(180/30) = 1075 s.
	want := []struct {
		name, state string
		ts          float64
		tol         float64
	}{{"hot", "reached", 200, 0}, {"handle", "predicted", 1075.06, 5}, {"cold", "predicted", math.NaN(), 0}, {"settled", "predicted", 600 * math.Log(180), 40}}
	for i, w := range want {
		g := got.Targets[i]
		if g.Name != w.name || g.State != w.state {
			t.Errorf("target %d = %s %s, want %s %s", i, g.Name, g.State, w.name, w.state)
			continue
		}
		switch {
		case math.IsNaN(w.ts) && w.state == "predicted":
			if g.TS != nil || g.EarliestS == nil || *g.EarliestS < 900 || g.LatestS != nil || g.DueS != nil {
				t.Errorf("%s: t_s %v, interval [%v, %v], due %v: want only an early bound after 900 s", g.Name, g.TS, g.EarliestS, g.LatestS, g.DueS)
			}
		case math.IsNaN(w.ts):
			if g.TS != nil || g.EarliestS != nil || g.LatestS != nil {
				t.Errorf("%s: times %v %v %v, want null", g.Name, g.TS, g.EarliestS, g.LatestS)
			}
		case g.TS == nil || math.Abs(*g.TS-w.ts) > w.tol:
			t.Errorf("%s: t_s %v, want %g ± %g", g.Name, g.TS, w.ts, w.tol)
		case w.state == "predicted" && (g.EarliestS == nil || g.LatestS == nil || *g.EarliestS > *g.TS || *g.LatestS < *g.TS):
			t.Errorf("%s: interval [%v, %v] does not hold t_s %g", g.Name, g.EarliestS, g.LatestS, *g.TS)
		case w.state == "reached" && (g.EarliestS != nil || g.LatestS != nil):
			t.Errorf("%s: reached with an interval", g.Name)
		}
	}
	if c := got.Targets[3].Celsius; c == nil || math.Abs(*c-21) > 0.5 {
		t.Errorf("settled band edge %v, want ≈ 21 °C", c)
	}
	if !strings.Contains(strings.Join(got.Notes, " "), "2 readings were left out") {
		t.Errorf("notes %q do not count the missing and non-numeric readings", got.Notes)
	}
	// A fixed target at or below the handling limit on a cooling curve is a handling
	// target (markHandling), so cold is one too.
	kinds := map[string]string{"hot": "temperature", "handle": "handling", "cold": "handling", "settled": "settle"}
	for _, g := range got.Targets {
		if g.Kind != kinds[g.Name] {
			t.Errorf("%s: kind %q, want %q", g.Name, g.Kind, kinds[g.Name])
		}
		if (g.Kind == "handling") != (len(g.Cautions) == len(predict.HandlingCautions)) {
			t.Errorf("%s (%s): %d cautions", g.Name, g.Kind, len(g.Cautions))
		}
	}
	if d := got.Targets[1].DueS; d == nil || got.Targets[1].LatestS == nil || *d != *got.Targets[1].LatestS {
		t.Errorf("handling target due %v, want its interval's late end %v", d, got.Targets[1].LatestS)
	}
	// By 1500 s (2.5 time constants) the readings have settled: 10 °C, below the
	// fitted 20 °C, is unreachable.
	out, err = runFit(t, path, "--json", "--until", "1500", "--target", "cold=10")
	if err != nil {
		t.Fatalf("fit: %v\n%s", err, out)
	}
	if got, _ := decodeFit(t, out); got.Targets[0].State != "unreachable" {
		t.Errorf("cold at 1500 s: %s, want unreachable", got.Targets[0].State)
	}
}

func TestFitTextAndCautions(t *testing.T) {
	path := writeCurve(t, 5, 600, func(s float64) string { return fmt.Sprintf("%.1f", exponential(s)) })
	out, err := runFit(t, path, "--target", "handle=50", "--plot", filepath.Join(t.TempDir(), "fit.png"))
	if err != nil {
		t.Fatalf("fit: %v\n%s", err, out)
	}
	for _, want := range []string{"model lumped", "target handle (50 °C): predicted", "Handling cautions:", "contact thermometer"} {
		if !strings.Contains(out, want) {
			t.Errorf("summary lacks %q:\n%s", want, out)
		}
	}
}

func TestFitPlotWritesPNG(t *testing.T) {
	path := writeCurve(t, 5, 600, func(s float64) string { return fmt.Sprintf("%.1f", exponential(s)) })
	png := filepath.Join(t.TempDir(), "fit.png")
	if out, err := runFit(t, path, "--json", "--target", "handle=50", "--plot", png); err != nil {
		t.Fatalf("fit: %v\n%s", err, out)
	}
	b, err := os.ReadFile(png)
	if err != nil || len(b) < 1000 || !bytes.HasPrefix(b, []byte("\x89PNG")) {
		t.Fatalf("plot %s: %d bytes, err %v; want a PNG", png, len(b), err)
	}
}

// A 20 mm steel bar at 600 °C in still air: Bi = h·Lc/k is small (lumped valid); the
// same bar in a ceramic-like material (k = 1.5 W/mK) is well past 0.1, so the
// engine moves to a conduction model.
func TestFitSpecimenBiot(t *testing.T) {
	path := writeCurve(t, 10, 1800, func(s float64) string { return fmt.Sprintf("%.1f", 20+580*math.Exp(-s/900)) })
	dir := t.TempDir()
	for _, c := range []struct {
		k          float64
		outOfRange bool
	}{{45, false}, {1.5, true}} {
		spec := filepath.Join(dir, fmt.Sprintf("k%g.yaml", c.k))
		yaml := fmt.Sprintf("shape: cylinder\nsize_m: 0.02\nlength_m: 0.2\nsensor: center\nmaterial:\n  density_kg_m3: 7850\n  specific_heat_j_kgk: 470\n  conductivity_w_mk: %g\n  emissivity: 0.8\n", c.k)
		if err := os.WriteFile(spec, []byte(yaml), 0o600); err != nil {
			t.Fatal(err)
		}
		out, err := runFit(t, path, "--json", "--specimen", spec)
		if err != nil {
			t.Fatalf("fit: %v\n%s", err, out)
		}
		got, _ := decodeFit(t, out)
		if got.Biot == nil {
			t.Fatalf("k=%g: biot null with a specimen", c.k)
		}
		// Out of the lumped range, the engine moves to conduction (issue 4) and says why.
		notes := strings.Join(got.Notes, " ")
		moved := strings.HasPrefix(got.Model, "conduction-") && strings.Contains(notes, "replaces the lumped model")
		if (*got.Biot >= 0.1) != c.outOfRange || moved != c.outOfRange {
			t.Errorf("k=%g: model %s, biot %.3g, notes %q; want out of lumped range %v", c.k, got.Model, *got.Biot, got.Notes, c.outOfRange)
		}
	}
}

// A specimen file saying the bar warms in an oven at 180 °C: settle fit takes the set
// temperature as the ambient (no fitted room) and says so, and a bad convection key
// is refused naming it.
func TestFitSpecimenChamber(t *testing.T) {
	path := writeCurve(t, 10, 1200, func(s float64) string { return fmt.Sprintf("%.1f", 180-160*math.Exp(-s/700)) })
	dir := t.TempDir()
	base := "shape: cylinder\nsize_m: 0.02\nsensor: center\nmaterial: {name: carbon steel}\n"
	spec := filepath.Join(dir, "oven.yaml")
	if err := os.WriteFile(spec, []byte(base+"convection: chamber\nchamber_c: 180\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	out, err := runFit(t, path, "--json", "--specimen", spec, "--target", "ready=170")
	if err != nil {
		t.Fatalf("fit: %v\n%s", err, out)
	}
	got, _ := decodeFit(t, out)
	notes := strings.Join(got.Notes, " ")
	if !strings.Contains(notes, "chamber's set temperature, 180 °C") {
		t.Errorf("notes %q do not name the chamber's set temperature", got.Notes)
	}
	bad := filepath.Join(dir, "bad.yaml")
	if err := os.WriteFile(bad, []byte(base+"convection: oven\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	if out, err := runFit(t, path, "--specimen", bad); err == nil || !strings.Contains(err.Error(), "convection") {
		t.Errorf("bad convection: error %v, want one naming convection\n%s", err, out)
	}
}

// Mug of hot water (mosaicData CoolingWater via shared/realdata/README.md): not a single
// exponential nor dry convection and radiation; from the first hour `settle fit` must
// say it took the curve as open water and hold the measured crossing.
func TestFitMugCurve(t *testing.T) {
	const src = "../../../shared/realdata/mug-water-cooling.csv"
	b, err := os.ReadFile(src)
	if os.IsNotExist(err) {
		t.Skipf("%s absent (a plain clone has no shared folder)", src)
	}
	if err != nil {
		t.Fatal(err)
	}
	var csv strings.Builder
	csv.WriteString("t_s,temp_c\n")
	for _, line := range strings.Split(strings.TrimSpace(string(b)), "\n")[1:] {
		f := strings.Split(line, ",")
		var m float64
		fmt.Sscan(f[1], &m)
		fmt.Fprintf(&csv, "%g,%s\n", m*60, f[2])
	}
	path := filepath.Join(t.TempDir(), "mug.csv")
	if err := os.WriteFile(path, []byte(csv.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	out, err := runFit(t, path, "--json", "--until", "3600", "--target", "t40=40")
	if err != nil {
		t.Fatalf("fit: %v\n%s", err, out)
	}
	got, _ := decodeFit(t, out)
	// Convection and radiation alone settle the water far above the room; with
	// evaporation from an open surface (predict/evaporation.go) the curve fits, and
	// the note says the specimen was only guessed to be water.
	if notes := strings.Join(got.Notes, " "); !strings.Contains(notes, "Open water?") || !strings.Contains(notes, "taken as water with an open surface") {
		t.Errorf("notes %q do not say the mug was taken as open water", got.Notes)
	}
	// Fitted to 60 minutes, the interval lies after the last reading and holds the
	// observed crossing at 80 minutes (4800 s); an open end counts as infinite.
	tg := got.Targets[0]
	latest := math.Inf(1)
	if tg.LatestS != nil {
		latest = *tg.LatestS
	}
	if tg.State != "predicted" || tg.EarliestS == nil || *tg.EarliestS <= 3600 || *tg.EarliestS > 4800 || latest < 4800 {
		t.Errorf("40 °C: %s [%v, %v]: want an interval after the last reading (3600 s) holding the observed 4800 s", tg.State, tg.EarliestS, tg.LatestS)
	}
	// Early on (20 minutes in) the free ambient lands above 40 °C; the water does reach
	// 40 °C at 80 minutes, so "unreachable" would be a confident wrong answer.
	out, err = runFit(t, path, "--json", "--until", "1200", "--target", "t40=40")
	if err != nil {
		t.Fatalf("fit: %v\n%s", err, out)
	}
	got, _ = decodeFit(t, out)
	if s := got.Targets[0].State; s == "unreachable" {
		t.Errorf("at 20 min: 40 °C %s, want insufficient or predicted", s)
	}
}

func TestFitErrors(t *testing.T) {
	good := writeCurve(t, 5, 600, func(s float64) string { return fmt.Sprintf("%.1f", exponential(s)) })
	bad := filepath.Join(t.TempDir(), "bad.csv")
	if err := os.WriteFile(bad, []byte("time,temp\n0,1\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	// Clock times where seconds belong: every row malformed, and the error says why.
	iso := filepath.Join(t.TempDir(), "iso.csv")
	if err := os.WriteFile(iso, []byte("t_s,temp_c\n2026-03-14T09:00:00Z,300\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	// Lines ending in a carriage return alone: one long "header", quoted short, with a hint.
	var cr strings.Builder
	cr.WriteString("t_s;temp\r")
	for s := 0; s < 5000; s += 10 {
		fmt.Fprintf(&cr, "%d;%.1f\r", s, 300-float64(s)/10)
	}
	crPath := filepath.Join(t.TempDir(), "cr.csv")
	if err := os.WriteFile(crPath, []byte(cr.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		args []string
		want string
	}{
		{[]string{good, "--target", "handle"}, "want NAME=CELSIUS"},
		{[]string{good, "--target", "a=1", "--target", "a=2"}, "given twice"},
		{[]string{good, "--settle-band", "-1"}, "must be positive"},
		{[]string{bad}, "must name a time column in seconds"},
		{[]string{good, "--until", "-5"}, "no rows"},
		{[]string{iso}, `no rows with a time: 1 malformed rows left out (line 2: t_s "2026-03-14T09:00:00Z" is not a number of seconds)`},
		{[]string{crPath}, "carriage return alone"},
		{[]string{good, "--specimen", filepath.Join(t.TempDir(), "none.yaml")}, "--specimen"},
	}
	for _, c := range cases {
		if _, err := runFit(t, c.args...); err == nil || !strings.Contains(err.Error(), c.want) || len(err.Error()) > 600 {
			t.Errorf("%v: err %v, want one containing %q (and under 600 bytes)", c.args, err, c.want)
		}
	}
}
