package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"image/png"
	"io"
	"log/slog"
	"math"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/report"
	"github.com/settle-lab/settle/runs"
)

var journalT0 = time.Date(2026, 3, 14, 9, 0, 0, 0, time.UTC)

// execute runs the root command with args as a user would and returns its output.
func executeJournalCmd(t *testing.T, args ...string) (string, error) {
	t.Helper()
	root := newRootCmd()
	var out bytes.Buffer
	root.SetOut(&out)
	root.SetErr(&out)
	root.SetArgs(args)
	err := root.Execute()
	return out.String(), err
}

// writerJournal opens a writing journal in a new data directory, as the daemon does.
func writerJournal(t *testing.T) (*journal.Journal, string) {
	t.Helper()
	dir := t.TempDir()
	j, err := journal.Open(dir, journal.Options{CommitInterval: 20 * time.Millisecond, Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { j.Close() })
	return j, dir
}

// recordCooling appends a specimen cooling from 150 °C toward 21 °C (τ = 300 s),
// read every 5 s for 20 min, on channel rack-2, plus a fault at 100 s; our own
// invented demo scenario.
func recordCooling(t *testing.T, j *journal.Journal) {
	t.Helper()
	for s := 0; s <= 1200; s += 5 {
		r := daq.Reading{Logger: "bench", Channel: "rack-2", Time: journalT0.Add(time.Duration(s) * time.Second),
			Celsius: 21 + 129*math.Exp(-float64(s)/300), Status: daq.StatusOK}
		if s == 100 {
			r.Status, r.Celsius, r.Raw = daq.StatusOpen, math.NaN(), "OPEN"
		}
		j.Append(r)
	}
	if err := j.Flush(); err != nil {
		t.Fatal(err)
	}
}

func TestExportCSV(t *testing.T) {
	j, dir := writerJournal(t)
	recordCooling(t, j)
	out := filepath.Join(t.TempDir(), "rack-2.csv")
	msg, err := executeJournalCmd(t, "export", "--data-dir", dir, "--channel", "rack-2",
		"--from", "2026-03-14T09:01:00Z", "--to", "2026-03-14T09:02:00Z", "--out", out)
	if err != nil {
		t.Fatalf("export: %v\n%s", err, msg)
	}
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	// [60 s, 120 s) every 5 s: 12 readings, the one at 100 s a fault.
	if len(recs) != 13 || strings.Join(recs[0], ",") != "time,elapsed_s,channel,logger,celsius,status,raw" {
		t.Fatalf("%d rows, header %v; want 12 readings and the header", len(recs)-1, recs[0])
	}
	if recs[1][0] != "2026-03-14T09:01:00.000Z" || recs[1][1] != "0.000" || recs[9][5] != "open" || recs[9][4] != "" {
		t.Errorf("rows %v ... %v", recs[1], recs[9])
	}
	if !strings.Contains(msg, "12 readings of rack-2 written to "+out) {
		t.Errorf("message %q", msg)
	}
}

func TestExportErrors(t *testing.T) {
	_, dir := writerJournal(t)
	t.Setenv("SETTLE_DATA_DIR", "")
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"export", "--channel", "x"}, "--data-dir"},
		{[]string{"export", "--data-dir", dir, "--channel", "x", "--from", "yesterday"}, `--from "yesterday"`},
		{[]string{"export", "--data-dir", dir, "--channel", "rack-2", "--from", "2026-03-15", "--to", "2026-03-14"}, "--from 2026-03-15 is not before --to 2026-03-14"},
		{[]string{"export", "--data-dir", t.TempDir(), "--channel", "x"}, journal.FileName},
		{[]string{"report", "nope", "--data-dir", dir}, `report: unknown run "nope": the record has no runs yet`},
	} {
		if _, err := executeJournalCmd(t, tc.args...); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%v: %v, want an error mentioning %q", tc.args, err, tc.want)
		}
	}
}

// TestReportOfflineWhileDaemonWrites makes a report from the journal file while a
// writer (standing in for the daemon) keeps appending to it.
func TestReportOfflineWhileDaemonWrites(t *testing.T) {
	j, dir := writerJournal(t)
	run, err := j.StartRun(journal.RunSpec{Channel: "rack-2", Specimen: "S-1", Start: journalT0,
		Targets: json.RawMessage(`[{"name":"handle","celsius":45,"handling":true}]`)})
	if err != nil {
		t.Fatal(err)
	}
	recordCooling(t, j)
	if _, err := j.StopRun(run.ID, journalT0.Add(20*time.Minute)); err != nil {
		t.Fatal(err)
	}
	done := make(chan struct{})
	go func() { // the daemon goes on writing another channel
		defer close(done)
		for i := range 200 {
			j.Append(daq.Reading{Channel: "rack-5", Time: journalT0.Add(time.Hour + time.Duration(i)*time.Second), Celsius: 20, Status: daq.StatusOK})
			time.Sleep(time.Millisecond)
		}
	}()
	out := t.TempDir()
	msg, err := executeJournalCmd(t, "report", run.ID, "--data-dir", dir, "--out", out)
	<-done
	if err != nil {
		t.Fatalf("report: %v\n%s", err, msg)
	}
	var s report.Summary
	b, err := os.ReadFile(filepath.Join(out, run.ID+"-summary.json"))
	if err != nil || json.Unmarshal(b, &s) != nil {
		t.Fatalf("summary: %v\n%s", err, b)
	}
	// 21 + 129·exp(−t/300) = 45 at t = 300·ln(129/24) ≈ 504.5 s; the refit forecast
	// reports the observed crossing, the first reading at or below 45 °C (505 s).
	if s.Model == nil || math.Abs(*s.Model.TimeConstantS-300) > 3 || len(s.Targets) != 1 || s.Targets[0].Actual == nil ||
		math.Abs(s.Targets[0].Actual.Sub(journalT0).Seconds()-504.5) > 5 {
		t.Errorf("summary model %+v targets %+v", s.Model, s.Targets)
	}
	f, err := os.Open(filepath.Join(out, run.ID+".png"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if _, err := png.Decode(f); err != nil {
		t.Errorf("figure: %v", err)
	}
	if !strings.Contains(msg, run.ID+"-readings.csv") {
		t.Errorf("output %q does not list the files", msg)
	}
	list, err := executeJournalCmd(t, "runs", "--data-dir", dir)
	want := "RUN                      CHANNEL  SPECIMEN  STARTED               STOPPED\n" +
		run.ID + "  rack-2   S-1       2026-03-14T09:00:00Z  2026-03-14T09:20:00Z\n"
	if err != nil || list != want {
		t.Errorf("runs: %q, %v", list, err)
	}
}

func TestRunStartStopOverHTTP(t *testing.T) {
	j, _ := writerJournal(t)
	srv := httptest.NewServer(runs.API(j, runs.APIOptions{Token: "tok", Logger: slog.New(slog.NewTextHandler(io.Discard, nil))}))
	defer srv.Close()
	specFile := filepath.Join("..", "..", "testdata", "journal", "specimen-example.yaml")
	targets, err := os.ReadFile(filepath.Join("..", "..", "testdata", "journal", "targets-example.json"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := executeJournalCmd(t, "run-start", "--addr", srv.URL, "--token", "bad", "--channel", "rack-2", "--specimen", "S-7"); err == nil || !strings.Contains(err.Error(), "HTTP 401") {
		t.Errorf("wrong token: %v, want HTTP 401", err)
	}
	t.Setenv("SETTLE_TOKEN", "tok")
	out, err := executeJournalCmd(t, "run-start", "--addr", srv.URL, "--channel", "rack-2", "--specimen", "S-7",
		"--description", "bar", "--specimen-file", specFile, "--targets", string(targets))
	if err != nil || !strings.Contains(out, "started run") {
		t.Fatalf("run-start: %q, %v", out, err)
	}
	run, err := j.ActiveRun("rack-2")
	if err != nil || run.Specimen != "S-7" || run.Origin != "cli" || !strings.Contains(run.SpecimenSpec, "cylinder") {
		t.Fatalf("active run %+v, %v", run, err)
	}
	if ts, err := predict.ParseTargets(run.Targets); err != nil || len(ts) != 3 || ts[1].Hold != 5*time.Minute {
		t.Errorf("stored targets %s → %+v, %v; want the 3 example targets", run.Targets, ts, err)
	}
	if _, err := executeJournalCmd(t, "run-start", "--addr", srv.URL, "--channel", "rack-2", "--specimen", "S-8"); err == nil || !strings.Contains(err.Error(), "HTTP 409") {
		t.Errorf("second start: %v, want HTTP 409", err)
	}
	out, err = executeJournalCmd(t, "run-stop", "--addr", srv.URL, "--channel", "rack-2")
	if err != nil || !strings.Contains(out, "stopped run "+run.ID) {
		t.Fatalf("run-stop: %q, %v", out, err)
	}
	if _, err := executeJournalCmd(t, "run-stop", "--addr", srv.URL, "--channel", "rack-2"); err == nil || !strings.Contains(err.Error(), "no active run") {
		t.Errorf("second stop: %v", err)
	}
	if _, err := executeJournalCmd(t, "run-start", "--addr", srv.URL, "--channel", "x", "--specimen", "y", "--targets", `[{"name":"a"}]`); err == nil || !strings.Contains(err.Error(), "--targets") {
		t.Errorf("bad targets: %v", err)
	}
	notSpecimen := filepath.Join("..", "..", "testdata", "journal", "targets-example.json")
	if _, err := executeJournalCmd(t, "run-start", "--addr", srv.URL, "--channel", "x", "--specimen", "y", "--specimen-file", notSpecimen); err == nil || !strings.Contains(err.Error(), "--specimen-file") {
		t.Errorf("bad specimen file: %v", err)
	}
}

// TestRunsFiltersSayWhatMatched: with filters, an empty listing names them, and a
// specimen whose runs the filters leave out is known, not "unknown".
func TestRunsFiltersSayWhatMatched(t *testing.T) {
	j, dir := writerJournal(t)
	t.Setenv("SETTLE_DATA_DIR", "")
	run, err := j.StartRun(journal.RunSpec{Channel: "rack-2", Specimen: "S-041", Start: journalT0})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := j.StopRun(run.ID, journalT0.Add(time.Hour)); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--active"}, "no active runs\n"},
		{[]string{"--active", "--specimen", "S-041"}, "no active runs of specimen \"S-041\"\n"},
	} {
		out, err := executeJournalCmd(t, append([]string{"runs", "--data-dir", dir}, c.args...)...)
		if err != nil || out != c.want {
			t.Errorf("runs %v: %q, %v; want %q", c.args, out, err, c.want)
		}
	}
	if _, err := executeJournalCmd(t, "runs", "--data-dir", dir, "--active", "--specimen", "S-999"); err == nil || !strings.Contains(err.Error(), `unknown specimen "S-999": known specimens: S-041`) {
		t.Errorf("unknown specimen: %v", err)
	}
}

// TestExportFileNeverLeavesATruncatedFile: the CSV streams into a hidden partial file
// beside the output and is renamed only when complete, so an export that fails half-way
// keeps the previous file under the name and leaves no partial file behind.
func TestExportFileNeverLeavesATruncatedFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "rack-2.csv")
	if err := os.WriteFile(path, []byte("yesterday's export\n"), 0o640); err != nil {
		t.Fatal(err)
	}
	failing := func(w io.Writer) (int, error) {
		io.WriteString(w, strings.Repeat("half a row,", 20000)) // beyond the buffer: on disk
		return 7, errors.New("journal: disk I/O error")
	}
	if _, err := exportFile(path, failing); err == nil || !strings.Contains(err.Error(), "disk I/O error") {
		t.Fatalf("err %v, want the writer's error", err)
	}
	if b, _ := os.ReadFile(path); string(b) != "yesterday's export\n" {
		t.Errorf("after a failed export the file holds %d bytes, want the previous contents", len(b))
	}
	ok := func(w io.Writer) (int, error) { _, err := io.WriteString(w, "time,celsius\r\n"); return 1, err }
	if n, err := exportFile(path, ok); err != nil || n != 1 {
		t.Fatalf("n %d, err %v", n, err)
	}
	if b, _ := os.ReadFile(path); string(b) != "time,celsius\r\n" {
		t.Errorf("file holds %q", b)
	}
	if fi, err := os.Stat(path); err != nil || fi.Mode().Perm() != 0o640 {
		t.Errorf("mode %v, err %v; want 0640", fi.Mode(), err)
	}
	if err := os.Chmod(path, 0o600); err != nil { // a lab that keeps its exports private
		t.Fatal(err)
	}
	if _, err := exportFile(path, ok); err != nil {
		t.Fatal(err)
	}
	if fi, err := os.Stat(path); err != nil || fi.Mode().Perm() != 0o600 {
		t.Errorf("replacing a 0600 file: mode %v, err %v; want 0600 kept", fi.Mode(), err)
	}
	if left, _ := filepath.Glob(filepath.Join(dir, ".*partial")); len(left) != 0 {
		t.Errorf("partial files left behind: %v", left)
	}
}
