package journal

import (
	"encoding/json"
	"errors"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"github.com/settle-lab/settle/daq"
)

func TestRunLifecycle(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	for i := range 10 {
		j.Append(reading("c1", i))
	}
	j.Append(daq.Reading{Logger: "rack", Channel: "c1", Time: t0.Add(4500 * time.Millisecond), Status: daq.StatusOpen, Raw: "OPEN"})
	targets := json.RawMessage(`[{"name":"handle","celsius":45}]`)
	run, err := j.StartRun(RunSpec{Channel: "c1", Specimen: "S-17", Description: "steel bar", SpecimenSpec: "shape: cylinder\n", Targets: targets, Origin: "cli", Start: t0.Add(2 * time.Second)})
	if err != nil {
		t.Fatal(err)
	}
	if run.ID != "20260314T090002Z-c1" || !run.Active() || run.Specimen != "S-17" || string(run.Targets) != string(targets) || run.SpecimenSpec != "shape: cylinder\n" {
		t.Fatalf("started run = %+v", run)
	}
	if _, err := j.StartRun(RunSpec{Channel: "c1", Specimen: "S-18"}); !errors.Is(err, ErrRunActive) {
		t.Fatalf("second run on c1: %v, want ErrRunActive", err)
	}
	other, err := j.StartRun(RunSpec{Channel: "c2", Specimen: "S-19", Start: t0.Add(2 * time.Second)})
	if err != nil || other.ID != "20260314T090002Z-c2" {
		t.Fatalf("run on c2: %+v, %v", other, err)
	}
	if a, err := j.ActiveRun("c1"); err != nil || a.ID != run.ID {
		t.Fatalf("ActiveRun(c1) = %+v, %v", a, err)
	}
	if id, ok := j.ActiveRunID("c1"); !ok || id != run.ID {
		t.Fatalf("ActiveRunID(c1) = %q, %v", id, ok)
	}
	stopped, err := j.StopRun(run.ID, t0.Add(6*time.Second))
	if err != nil {
		t.Fatal(err)
	}
	s := stopped.Summary
	// Readings 2..6 s inclusive: 2, 3, 4, 4.5 (open), 5, 6.
	if stopped.Active() || s == nil || s.Readings != 6 || s.Faults != 1 || *s.FirstCelsius != 20.002 || *s.LastCelsius != 20.006 || *s.MinCelsius != 20.002 || *s.MaxCelsius != 20.006 {
		t.Fatalf("stopped run = %+v summary %+v", stopped, s)
	}
	if _, err := j.ActiveRun("c1"); !errors.Is(err, ErrNoRun) {
		t.Errorf("ActiveRun after stop: %v, want ErrNoRun", err)
	}
	if id, ok := j.ActiveRunID("c1"); ok {
		t.Errorf("ActiveRunID after stop = %q", id)
	}
	if _, err := j.StopRun(run.ID, time.Time{}); !errors.Is(err, ErrStopped) {
		t.Errorf("second stop: %v, want ErrStopped", err)
	}
	// A start inside the stopped run is moved just after its stop (runs never overlap).
	again, err := j.StartRun(RunSpec{Channel: "c1", Specimen: "S-20", Start: t0.Add(2 * time.Second)})
	if err != nil || again.ID != "20260314T090006Z-c1" || !again.Started.After(stopped.Stopped) {
		t.Fatalf("restart on c1 inside the stopped run: %+v, %v (want it to start after %v)", again, err, stopped.Stopped)
	}
	all, err := j.Runs(RunFilter{})
	if err != nil || len(all) != 3 {
		t.Fatalf("Runs = %d, %v, want 3", len(all), err)
	}
	c1, err := j.Runs(RunFilter{Channel: "c1"})
	if err != nil || len(c1) != 2 {
		t.Fatalf("Runs(c1) = %d, %v, want 2", len(c1), err)
	}
	late, err := j.Runs(RunFilter{Channel: "c1", From: t0.Add(7 * time.Second)})
	if err != nil || len(late) != 1 || late[0].ID != again.ID {
		t.Fatalf("c1 runs overlapping [7 s, ∞) = %+v, %v, want only the active one", late, err)
	}
}

func TestActiveRunsSurviveRestart(t *testing.T) {
	dir := t.TempDir()
	j, err := Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	run, err := j.StartRun(RunSpec{Channel: "c4", Specimen: "S"})
	if err != nil {
		t.Fatal(err)
	}
	if err := j.Close(); err != nil {
		t.Fatal(err)
	}
	j, err = Open(dir, Options{Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	if id, ok := j.ActiveRunID("c4"); !ok || id != run.ID {
		t.Errorf("after restart ActiveRunID(c4) = %q, %v, want %q", id, ok, run.ID)
	}
	ro, err := Open(dir, Options{Logger: quiet, ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer ro.Close()
	if id, ok := ro.ActiveRunID("c4"); !ok || id != run.ID {
		t.Errorf("read-only ActiveRunID(c4) = %q, %v, want %q", id, ok, run.ID)
	}
}

func TestStartRunRejects(t *testing.T) {
	j, _ := open(t, Options{})
	for _, spec := range []RunSpec{
		{Specimen: "x"},
		{Channel: "c1"},
		{Channel: "c1", Specimen: "x", Targets: json.RawMessage(`[{`)},
		{Channel: "c1", Specimen: "x", ID: "../etc"},
	} {
		if _, err := j.StartRun(spec); !errors.Is(err, ErrInvalid) {
			t.Errorf("StartRun(%+v): %v, want ErrInvalid", spec, err)
		}
	}
	if _, err := j.Run("nope"); !errors.Is(err, ErrNoRun) {
		t.Errorf("Run(nope): %v, want ErrNoRun", err)
	}
}

// A specimen id over MaxSpecimenBytes is refused with its length and only a clipped
// prefix in the message (the message reaches API clients and logs); one at the limit,
// multi-byte letters included, is kept whole.
func TestSpecimenIDBound(t *testing.T) {
	j, _ := open(t, Options{})
	huge := strings.Repeat("S", 60<<10)
	_, err := j.StartRun(RunSpec{Channel: "c1", Specimen: huge})
	if !errors.Is(err, ErrInvalid) {
		t.Fatalf("StartRun with a 60 KiB specimen: %v, want ErrInvalid", err)
	}
	msg := err.Error()
	if !strings.Contains(msg, "61440 bytes, over the limit of 128") || len(msg) > 200 {
		t.Errorf("error (%d bytes) = %.300s, want the length and limit, under 200 bytes", len(msg), msg)
	}
	longID := strings.Repeat("é", 65) // 130 bytes: the clip must not split a letter
	if _, err := j.StartRun(RunSpec{Channel: "c1", Specimen: longID}); err == nil || !utf8.ValidString(err.Error()) {
		t.Errorf("StartRun with a 130-byte specimen: %v, want a valid UTF-8 refusal", err)
	}
	atLimit := strings.Repeat("é", 64) // 128 bytes
	run, err := j.StartRun(RunSpec{Channel: "c1", Specimen: atLimit})
	if err != nil || run.Specimen != atLimit {
		t.Errorf("StartRun with a 128-byte specimen: %+v, %v; want it kept whole", run, err)
	}
}

func TestForecastHistoryKeepsMeaningfulChanges(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	at := t0.Add(time.Hour)
	type step struct {
		dt    time.Duration // forecast time after t0
		state string
		shift time.Duration // of At and both bounds
		kept  bool
	}
	steps := []step{
		{0, "insufficient", 0, true},
		{10 * time.Second, "insufficient", 0, false},
		{20 * time.Second, "predicted", 0, true},
		// remaining ≈ 1 h: threshold max(30 s, 1 % of 1 h = 36 s) = 36 s
		{30 * time.Second, "predicted", 35 * time.Second, false},
		{40 * time.Second, "predicted", 37 * time.Second, true},
		{50 * time.Second, "predicted", 37*time.Second + 20*time.Second, false},
		{60 * time.Second, "reached", 0, true},
		{70 * time.Second, "reached", 0, false},
	}
	for i, s := range steps {
		a, lo, hi := at.Add(s.shift), at.Add(s.shift-time.Minute), at.Add(s.shift+time.Minute)
		if s.state == "insufficient" {
			a, lo, hi = time.Time{}, time.Time{}, time.Time{}
		}
		if s.state == "reached" {
			a, lo, hi = t0.Add(55*time.Second), time.Time{}, time.Time{}
		}
		if got := j.RecordForecast("r1", ForecastPoint{Time: t0.Add(s.dt), Target: "handle", State: s.state, At: a, Earliest: lo, Latest: hi, Reached: s.state == "reached"}); got != s.kept {
			t.Errorf("step %d (%+v): kept %v, want %v", i, s, got, s.kept)
		}
	}
	mustFlush(t, j)
	hist, err := j.ForecastHistory("r1")
	if err != nil {
		t.Fatal(err)
	}
	if len(hist) != 4 || hist[3].State != "reached" || !hist[2].At.Equal(at.Add(37*time.Second)) || !hist[0].At.IsZero() {
		t.Errorf("history = %+v", hist)
	}
	cross, err := j.Crossings("r1")
	if err != nil || !cross["handle"].Equal(t0.Add(55*time.Second)) || len(cross) != 1 {
		t.Errorf("crossings = %v, %v, want handle at t0+55 s", cross, err)
	}
	if est, err := j.EstimatedCrossings("r1"); err != nil || len(est) != 0 {
		t.Errorf("estimated crossings = %v, %v; want none (handle was observed)", est, err)
	}
	// A crossing inside a gap of the readings is recorded as estimated.
	j.RecordForecast("r1", ForecastPoint{Time: t0.Add(90 * time.Second), Target: "settled", State: "reached",
		At: t0.Add(80 * time.Second), Estimated: true, Reached: true})
	mustFlush(t, j)
	est, err := j.EstimatedCrossings("r1")
	if err != nil || !est["settled"] || len(est) != 1 {
		t.Errorf("estimated crossings = %v, %v; want settled", est, err)
	}
	if hist, _ := j.ForecastHistory("r1"); !hist[len(hist)-1].Estimated {
		t.Errorf("last history point %+v not marked estimated", hist[len(hist)-1])
	}
}

func TestRetention(t *testing.T) {
	for _, tc := range []struct {
		name     string
		keep     time.Duration
		left     int64 // readings of c1 left
		pruned   string
		deletedN int64
	}{
		// run spans readings 100..399 (300 readings, 1 s apart); others stay.
		{"drop", 0, 400, "dropped", 300},
		{"thin to one a minute", time.Minute, 405, "thinned", 295},
	} {
		t.Run(tc.name, func(t *testing.T) {
			j, _ := open(t, Options{CommitInterval: time.Hour})
			for i := range 700 {
				j.Append(reading("c1", i))
			}
			mustFlush(t, j)
			run, err := j.StartRun(RunSpec{Channel: "c1", Specimen: "S", Start: t0.Add(100 * time.Second)})
			if err != nil {
				t.Fatal(err)
			}
			active, _ := j.StartRun(RunSpec{Channel: "c2", Specimen: "T", Start: t0})
			if _, err := j.StopRun(run.ID, t0.Add(399*time.Second)); err != nil {
				t.Fatal(err)
			}
			p := Retention{Age: time.Hour, Keep: tc.keep}
			if st, err := j.Prune(t0.Add(30*time.Minute), p); err != nil || st.Runs != 0 {
				t.Fatalf("prune before the age: %+v, %v, want nothing", st, err)
			}
			st, err := j.Prune(t0.Add(2*time.Hour), p)
			if err != nil || st.Runs != 1 || st.Deleted != tc.deletedN {
				t.Fatalf("prune: %+v, %v, want 1 run and %d deleted", st, err, tc.deletedN)
			}
			if n, _ := j.Count("c1"); n != tc.left {
				t.Errorf("%d readings left, want %d", n, tc.left)
			}
			got, err := j.Run(run.ID)
			if err != nil || got.Pruned != tc.pruned || got.Summary == nil || got.Summary.Readings != 300 {
				t.Errorf("pruned run = %+v (%v), want %q with its 300-reading summary kept", got, err, tc.pruned)
			}
			if a, _ := j.Run(active.ID); a.Pruned != "" {
				t.Errorf("active run pruned: %+v", a)
			}
			if st, _ := j.Prune(t0.Add(3*time.Hour), p); st.Runs != 0 {
				t.Errorf("second prune touched %d runs, want 0", st.Runs)
			}
		})
	}
}

// TestRunsNeverOverlap: a run started before the channel's last stop (an auto-detected
// placement reports a start a little in the past) begins at that stop, so pruning the
// earlier run cannot delete the new run's readings.
func TestRunsNeverOverlap(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	for i := range 700 {
		j.Append(reading("c1", i))
	}
	mustFlush(t, j)
	a, err := j.StartRun(RunSpec{Channel: "c1", Specimen: "A", Start: t0})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := j.StopRun(a.ID, t0.Add(400*time.Second)); err != nil {
		t.Fatal(err)
	}
	b, err := j.StartRun(RunSpec{Channel: "c1", Specimen: "B", Start: t0.Add(100 * time.Second)})
	if err != nil {
		t.Fatal(err)
	}
	if want := t0.Add(400*time.Second + 1); !b.Started.Equal(want) {
		t.Errorf("run B starts at %v, want just after the previous stop, %v", b.Started, want)
	}
	if _, err := j.Prune(t0.Add(3*time.Hour), Retention{Age: time.Hour}); err != nil {
		t.Fatal(err)
	}
	// Run A held readings 0..400 s (its stop is inclusive); 401..699 s are B's and stay.
	got := collect(t, j, "c1", t0.Add(400*time.Second+1), t0.Add(700*time.Second))
	if len(got) != 299 {
		t.Errorf("readings of the active run after pruning the earlier one: %d, want 299", len(got))
	}
}
