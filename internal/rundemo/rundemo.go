// Package rundemo is the test fixture the runs and report tests share: the demo run,
// our own invented scenario of a steel specimen cooling in still air, recorded into a
// journal the way the daemon records it. Only tests import it.
package rundemo

import (
	"encoding/json"
	"io"
	"log/slog"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
)

// T0 is the start of the demo run.
var T0 = time.Date(2026, 3, 14, 9, 0, 0, 0, time.UTC)

// The demo run: Newton cooling from 180 °C toward 22 °C with a 600 s time constant,
// read every 2 s with ±0.1 °C noise for 40 min. The handling target (45 °C) is
// crossed at 600·ln(158/23) ≈ 1156.3 s.
const (
	Ambient = 22.0
	Initial = 180.0
	Tau     = 600.0
	Span    = 2400
)

// Crossing is when the demo run crosses its handling target, seconds after T0.
var Crossing = Tau * math.Log((Initial-Ambient)/(45-Ambient))

// Specimen is a 25 mm carbon-steel bar, 100 mm long (predict's specimen form).
const Specimen = "shape: cylinder\nsize_m: 0.0125\nlength_m: 0.1\nsensor: surface\nmaterial:\n  name: carbon steel\n"

// Targets are the demo run's targets as a run's spec gives them.
const Targets = `[{"name":"handle","celsius":45,"handling":true},{"name":"settled","within":2}]`

// OpenJournal opens a journal in a temporary directory, closed when t ends.
func OpenJournal(t testing.TB) *journal.Journal {
	t.Helper()
	j, err := journal.Open(t.TempDir(), journal.Options{CommitInterval: time.Hour, Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { j.Close() })
	return j
}

// Record records the demo run in j the way the daemon does: readings appended, the
// tracker fed, forecasts recorded with record (runs.RecordForecasts) after each
// reading; it returns the run and the last forecast.
func Record(t testing.TB, j *journal.Journal, record func(*journal.Journal, string, *predict.Forecast)) (journal.Run, *predict.Forecast) {
	t.Helper()
	run, err := j.StartRun(journal.RunSpec{Channel: "rack-3", Specimen: "S-2026-041", Description: "quenched bar, air cooling",
		SpecimenSpec: Specimen, Targets: json.RawMessage(Targets), Origin: "cli", Start: T0})
	if err != nil {
		t.Fatal(err)
	}
	targets, err := predict.ParseTargets(run.Targets)
	if err != nil {
		t.Fatal(err)
	}
	tr := predict.NewTracker(targets, predict.TrackerOptions{FitEvery: 2 * time.Minute})
	rng := rand.New(rand.NewPCG(4, 1))
	for s := 0; s <= Span; s += 2 {
		at := T0.Add(time.Duration(s) * time.Second)
		c := Ambient + (Initial-Ambient)*math.Exp(-float64(s)/Tau) + (rng.Float64()-0.5)*0.2
		r := daq.Reading{Logger: "bench-a", Channel: "rack-3", Time: at, Celsius: c, Status: daq.StatusOK}
		if s == 600 {
			r = daq.Reading{Logger: "bench-a", Channel: "rack-3", Time: at, Celsius: math.NaN(), Status: daq.StatusOpen, Raw: "=OPEN"}
		}
		j.Append(r)
		if r.OK() {
			tr.Add(r.Time, r.Celsius)
			record(j, run.ID, tr.Forecast())
		}
	}
	if err := j.Flush(); err != nil {
		t.Fatal(err)
	}
	run, err = j.StopRun(run.ID, T0.Add(Span*time.Second))
	if err != nil {
		t.Fatal(err)
	}
	return run, tr.Forecast()
}
