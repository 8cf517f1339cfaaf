package report

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"image/png"
	"io"
	"log/slog"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
)

var t0 = time.Date(2026, 3, 14, 9, 0, 0, 0, time.UTC)

// The demo run: our own invented scenario of a steel specimen cooling in still air,
// Newton cooling from 180 °C toward 22 °C with a 600 s time constant, read every 2 s
// with ±0.1 °C noise for 40 min. The handling target (45 °C) is crossed at
// 600·ln(158/23) ≈ 1156.3 s.
const (
	demoAmbient = 22.0
	demoInitial = 180.0
	demoTau     = 600.0
	demoSpan    = 2400
)

var demoCrossing = demoTau * math.Log((demoInitial-demoAmbient)/(45-demoAmbient))

// demoSpecimen is a 25 mm carbon-steel bar, 100 mm long (predict's specimen form).
const demoSpecimen = "shape: cylinder\nsize_m: 0.0125\nlength_m: 0.1\nsensor: surface\nmaterial:\n  name: carbon steel\n"

const demoTargets = `[{"name":"handle","celsius":45,"handling":true},{"name":"settled","within":2}]`

func openJournal(t testing.TB) *journal.Journal {
	t.Helper()
	j, err := journal.Open(t.TempDir(), journal.Options{CommitInterval: time.Hour, Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { j.Close() })
	return j
}

// demoRun records the demo run in j the way the daemon does: readings appended, the
// tracker fed, forecasts recorded after each reading; it returns the run and the last
// forecast.
func demoRun(t testing.TB, j *journal.Journal) (journal.Run, *predict.Forecast) {
	t.Helper()
	run, err := j.StartRun(journal.RunSpec{Channel: "rack-3", Specimen: "S-2026-041", Description: "quenched bar, air cooling",
		SpecimenSpec: demoSpecimen, Targets: json.RawMessage(demoTargets), Origin: "cli", Start: t0})
	if err != nil {
		t.Fatal(err)
	}
	targets, err := ParseTargets(run.Targets)
	if err != nil {
		t.Fatal(err)
	}
	tr := predict.NewTracker(targets, predict.TrackerOptions{FitEvery: 2 * time.Minute})
	rng := rand.New(rand.NewPCG(4, 1))
	for s := 0; s <= demoSpan; s += 2 {
		at := t0.Add(time.Duration(s) * time.Second)
		c := demoAmbient + (demoInitial-demoAmbient)*math.Exp(-float64(s)/demoTau) + (rng.Float64()-0.5)*0.2
		r := daq.Reading{Logger: "bench-a", Channel: "rack-3", Time: at, Celsius: c, Status: daq.StatusOK}
		if s == 600 {
			r = daq.Reading{Logger: "bench-a", Channel: "rack-3", Time: at, Celsius: math.NaN(), Status: daq.StatusOpen, Raw: "=OPEN"}
		}
		j.Append(r)
		if r.OK() {
			tr.Add(r.Time, r.Celsius)
			RecordForecasts(j, run.ID, tr.Forecast())
		}
	}
	if err := j.Flush(); err != nil {
		t.Fatal(err)
	}
	run, err = j.StopRun(run.ID, t0.Add(demoSpan*time.Second))
	if err != nil {
		t.Fatal(err)
	}
	return run, tr.Forecast()
}

func TestWriteDemoReport(t *testing.T) {
	j := openJournal(t)
	run, fc := demoRun(t, j)
	// A technician acknowledged the specimen ready on the board (kept with the run).
	ack := journal.Ack{Channel: run.Channel, Segment: t0, At: t0.Add(time.Duration(demoCrossing+60) * time.Second), By: "AK", RunID: run.ID}
	if err := j.Acknowledge(ack); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if keep := os.Getenv("SETTLE_KEEP_REPORT"); keep != "" { // to look at the demo report by hand
		dir = keep
	}
	paths, err := Write(dir, j, run.ID, fc)
	if err != nil {
		t.Fatal(err)
	}
	checkCSV(t, paths.CSV, demoSpan/2+1)
	s := checkSummary(t, paths.JSON)
	if s.Run.Summary == nil || s.Run.Summary.Readings != demoSpan/2+1 || s.Run.Summary.Faults != 1 {
		t.Errorf("run summary %+v, want %d readings with 1 fault", s.Run.Summary, demoSpan/2+1)
	}
	if len(s.Acknowledgements) != 1 || s.Acknowledgements[0] != ack {
		t.Errorf("acknowledgements %+v, want %+v", s.Acknowledgements, ack)
	}
	checkPNG(t, paths.PNG)
}

func checkCSV(t *testing.T, path string, rows int) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("CSV %s does not parse: %v", path, err)
	}
	if len(recs) != rows+1 || !equal(recs[0], CSVHeader) {
		t.Fatalf("CSV has %d rows (header %v), want %d plus the header", len(recs), recs[0], rows)
	}
	first, err := time.Parse(time.RFC3339, recs[1][0])
	if err != nil || !first.Equal(t0) || recs[1][1] != "0.000" {
		t.Errorf("first row time %q elapsed %q (%v), want %s and 0.000", recs[1][0], recs[1][1], err, t0)
	}
	c, err := strconv.ParseFloat(recs[1][4], 64)
	if err != nil || math.Abs(c-demoInitial) > 0.1 {
		t.Errorf("first row °C %q, want %v ± 0.1", recs[1][4], demoInitial)
	}
	fault := recs[301] // t = 600 s
	if fault[4] != "" || fault[5] != "open" || fault[6] != "'=OPEN" {
		t.Errorf("fault row %v: want empty °C, status open and the raw text defused as '=OPEN", fault)
	}
}

func checkSummary(t *testing.T, path string) Summary {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var s Summary
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatalf("summary %s: %v", path, err)
	}
	if s.Model == nil || s.Model.Name != "lumped" || s.Model.TimeConstantS == nil || math.Abs(*s.Model.TimeConstantS-demoTau) > 0.02*demoTau {
		t.Fatalf("model %+v, want lumped with τ = %v s ± 2 %%", s.Model, demoTau)
	}
	if s.Model.HWm2K != nil || s.Model.Biot != nil {
		t.Errorf("h %v and Biot %v without specimen data, want null", s.Model.HWm2K, s.Model.Biot)
	}
	if len(s.Targets) != 2 || s.Targets[0].Name != "handle" || len(s.Cautions) == 0 {
		t.Fatalf("targets %+v cautions %v", s.Targets, s.Cautions)
	}
	h := s.Targets[0]
	if h.Actual == nil || math.Abs(h.Actual.Sub(t0).Seconds()-demoCrossing) > 4 {
		t.Errorf("handle actual %v, want t0 + %.1f s ± 4 s (one reading either side)", h.Actual, demoCrossing)
	}
	if len(h.History) < 3 || h.ConvergedAt == nil || h.ConvergedAt.After(*h.Actual) {
		t.Errorf("handle history %d points, converged at %v, want several points and convergence before the crossing", len(h.History), h.ConvergedAt)
	}
	last := h.History[len(h.History)-1]
	if last.State != "reached" {
		t.Errorf("last history point %+v, want reached", last)
	}
	return s
}

func checkPNG(t *testing.T, path string) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("PNG %s: %v", path, err)
	}
	if b := img.Bounds(); b.Dx() != 1152 || b.Dy() != 864 {
		t.Errorf("PNG is %dx%d, want 1152x864 (12 × 9 in at 96 dpi)", b.Dx(), b.Dy())
	}
}

func TestRefitMatchesDemo(t *testing.T) {
	j := openJournal(t)
	run, _ := demoRun(t, j)
	fc, err := Refit(j, run, predict.TrackerOptions{})
	if err != nil || fc == nil {
		t.Fatalf("Refit: %v, %v", fc, err)
	}
	if math.Abs(fc.TimeConstant.Seconds()-demoTau) > 0.02*demoTau || math.Abs(fc.Ambient-demoAmbient) > 0.5 {
		t.Errorf("refit τ %v ambient %v, want %v s and %v °C", fc.TimeConstant, fc.Ambient, demoTau, demoAmbient)
	}
	// With the run's specimen the refit reports h = ρc(V/A)/τ and Bi = h(V/A)/k. By
	// hand, with predict/material's carbon-steel row (ρ 7854 kg/m³, c 434 J/(kg·K),
	// k 60.5 W/(m·K)) and a 12.5 mm × 100 mm cylinder with its ends, V/A = rL/(2(r+L)).
	lc := 0.0125 * 0.1 / (2 * (0.0125 + 0.1))
	wantH := 7854 * 434 * lc / demoTau
	m := modelOf(fc)
	if m.HWm2K == nil || math.Abs(*m.HWm2K-wantH) > 0.02*wantH || m.Biot == nil || math.Abs(*m.Biot-wantH*lc/60.5) > 0.02*wantH*lc/60.5 {
		t.Errorf("refit h %v Biot %v, want %.2f W/(m²·K) and %.5f", m.HWm2K, m.Biot, wantH, wantH*lc/60.5)
	}
	var buf bytes.Buffer
	s, err := Build(j, run, nil, t0)
	if err != nil {
		t.Fatal(err)
	}
	if s.Model != nil || len(s.Targets) != 2 || s.Targets[1].Within == nil || *s.Targets[1].Within != 2 {
		t.Errorf("summary without a model: %+v", s)
	}
	if err := WritePNG(&buf, s, nil, nil); err != nil {
		t.Errorf("PNG of a run without readings or model: %v", err)
	}
}

func TestSafeCell(t *testing.T) {
	for in, want := range map[string]string{
		"": "", "ok": "ok", "-12.5": "-12.5", "+3": "+3", "=1+1": "'=1+1", "@SUM(A1)": "'@SUM(A1)",
		"-cmd": "'-cmd", "\tx": "'\tx", "OPEN": "OPEN",
	} {
		if got := safeCell(in); got != want {
			t.Errorf("safeCell(%q) = %q, want %q", in, got, want)
		}
	}
}

func equal(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func TestRecordBench(t *testing.T) {
	j := openJournal(t)
	specs := []predict.ChannelSpec{
		{Name: "rack-1", Targets: []predict.Target{{Name: "handle", Celsius: 45}}},
		{Name: "rack-2", Targets: []predict.Target{{Name: "handle", Celsius: 45}}},
	}
	bench := predict.NewBench(specs, predict.TrackerOptions{FitEvery: 2 * time.Minute})
	run, err := j.StartRun(journal.RunSpec{Channel: "rack-1", Specimen: "S", Start: t0})
	if err != nil {
		t.Fatal(err)
	}
	for s := 0; s <= 600; s += 5 {
		c := demoAmbient + (demoInitial-demoAmbient)*math.Exp(-float64(s)/demoTau)
		for _, ch := range []string{"rack-1", "rack-2"} {
			bench.Observe(ch, t0.Add(time.Duration(s)*time.Second), c)
		}
		RecordBench(j, bench.Snapshot())
	}
	if err := j.Flush(); err != nil {
		t.Fatal(err)
	}
	h, err := j.ForecastHistory(run.ID)
	if err != nil || len(h) == 0 || h[len(h)-1].State != string(predict.StatePredicted) {
		t.Fatalf("history of the run on rack-1: %+v, %v; want predictions", h, err)
	}
	// The prediction should sit near the true crossing (demoCrossing s after t0).
	if last := h[len(h)-1]; math.Abs(last.At.Sub(t0).Seconds()-demoCrossing) > 30 {
		t.Errorf("last prediction %v, want t0 + %.0f s ± 30 s", last.At, demoCrossing)
	}
	runs, _ := j.Runs(journal.RunFilter{Channel: "rack-2"})
	if len(runs) != 0 {
		t.Errorf("rack-2 has runs %+v", runs)
	}
}

func TestModelReportsH(t *testing.T) {
	for _, tc := range []struct {
		params []predict.Param
		want   float64 // NaN: h not reported
	}{
		{[]predict.Param{{Name: "h_w_m2k", Value: 12.5, Unit: "W/(m²·K)"}}, 12.5},
		{[]predict.Param{{Name: "h_scale", Value: 1.1}}, math.NaN()},
		{[]predict.Param{{Name: "coef", Value: 9, Unit: "W/m²K"}}, 9},
		{nil, math.NaN()},
	} {
		m := modelOf(&predict.Forecast{Model: "x", Params: tc.params, Biot: math.NaN(), Ambient: 20, RMSE: 0.1})
		switch {
		case math.IsNaN(tc.want) && m.HWm2K != nil:
			t.Errorf("%+v: h = %v, want null", tc.params, *m.HWm2K)
		case !math.IsNaN(tc.want) && (m.HWm2K == nil || *m.HWm2K != tc.want):
			t.Errorf("%+v: h = %v, want %v", tc.params, m.HWm2K, tc.want)
		}
	}
}
