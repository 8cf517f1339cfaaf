package report_test

import (
	"bytes"
	"encoding/csv"
	"image/png"
	"math"
	"os"
	"slices"
	"strconv"
	"testing"
	"time"

	"encoding/json"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/internal/rundemo"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/report"
	"github.com/settle-lab/settle/runs"
)

// The demo run (rundemo): our own invented scenario of a steel specimen cooling in
// still air; see package rundemo for its figures.
var (
	t0           = rundemo.T0
	demoCrossing = rundemo.Crossing
)

const (
	demoAmbient = rundemo.Ambient
	demoInitial = rundemo.Initial
	demoTau     = rundemo.Tau
	demoSpan    = rundemo.Span
)

func openJournal(t testing.TB) *journal.Journal { return rundemo.OpenJournal(t) }

// demoRun records the demo run in j the way the daemon does (runs.RecordForecasts).
func demoRun(t testing.TB, j *journal.Journal) (journal.Run, *predict.Forecast) {
	return rundemo.Record(t, j, runs.RecordForecasts)
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
	paths, err := report.Write(dir, j, run.ID, fc)
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
	if len(recs) != rows+1 || !slices.Equal(recs[0], report.CSVHeader) {
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

func checkSummary(t *testing.T, path string) report.Summary {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var s report.Summary
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
	fc, err := runs.Refit(j, run, predict.TrackerOptions{})
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
	m := report.ModelOf(fc)
	if m.HWm2K == nil || math.Abs(*m.HWm2K-wantH) > 0.02*wantH || m.Biot == nil || math.Abs(*m.Biot-wantH*lc/60.5) > 0.02*wantH*lc/60.5 {
		t.Errorf("refit h %v Biot %v, want %.2f W/(m²·K) and %.5f", m.HWm2K, m.Biot, wantH, wantH*lc/60.5)
	}
	var buf bytes.Buffer
	s, err := report.Build(j, run, nil, t0)
	if err != nil {
		t.Fatal(err)
	}
	if s.Model != nil || len(s.Targets) != 2 || s.Targets[1].Within == nil || *s.Targets[1].Within != 2 {
		t.Errorf("summary without a model: %+v", s)
	}
	if err := report.WritePNG(&buf, s, nil, nil); err != nil {
		t.Errorf("PNG of a run without readings or model: %v", err)
	}
}

func TestSafeCell(t *testing.T) {
	for in, want := range map[string]string{
		"": "", "ok": "ok", "-12.5": "-12.5", "+3": "+3", "=1+1": "'=1+1", "@SUM(A1)": "'@SUM(A1)",
		"-cmd": "'-cmd", "\tx": "'\tx", "OPEN": "OPEN",
	} {
		if got := report.SafeCell(in); got != want {
			t.Errorf("report.SafeCell(%q) = %q, want %q", in, got, want)
		}
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
		m := report.ModelOf(&predict.Forecast{Model: "x", Params: tc.params, Biot: math.NaN(), Ambient: 20, RMSE: 0.1})
		switch {
		case math.IsNaN(tc.want) && m.HWm2K != nil:
			t.Errorf("%+v: h = %v, want null", tc.params, *m.HWm2K)
		case !math.IsNaN(tc.want) && (m.HWm2K == nil || *m.HWm2K != tc.want):
			t.Errorf("%+v: h = %v, want %v", tc.params, m.HWm2K, tc.want)
		}
	}
}
