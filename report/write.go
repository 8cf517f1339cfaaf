package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
	"iter"
)

// Paths are the files Write made.
type Paths struct {
	CSV, JSON, PNG string
}

// Write writes the report of run runID into dir (created if needed): <id>-readings.csv,
// <id>-summary.json and <id>.png. fc is the run's forecast: the daemon's live one for
// an active run, or Refit's; nil gives a report without a model.
func Write(dir string, j *journal.Journal, runID string, fc *predict.Forecast) (Paths, error) {
	run, err := j.Run(runID)
	if err != nil {
		return Paths{}, err
	}
	readings, err := RunReadings(j, run)
	if err != nil {
		return Paths{}, err
	}
	s, err := Build(j, run, fc, time.Now())
	if err != nil {
		return Paths{}, err
	}
	if err := os.MkdirAll(dir, 0o750); err != nil {
		return Paths{}, fmt.Errorf("report of run %s: %w", runID, err)
	}
	base := filepath.Join(dir, FileName(run.ID))
	p := Paths{CSV: base + "-readings.csv", JSON: base + "-summary.json", PNG: base + ".png"}
	var csvBuf, jsonBuf, pngBuf bytes.Buffer
	if _, err := WriteCSV(&csvBuf, Seq(readings), run.Started); err != nil {
		return Paths{}, fmt.Errorf("report of run %s: %w", runID, err)
	}
	if err := writeSummary(&jsonBuf, s); err != nil {
		return Paths{}, err
	}
	if err := WritePNG(&pngBuf, s, readings, fc); err != nil {
		return Paths{}, err
	}
	for path, b := range map[string][]byte{p.CSV: csvBuf.Bytes(), p.JSON: jsonBuf.Bytes(), p.PNG: pngBuf.Bytes()} {
		if err := writeFile(path, b); err != nil {
			return Paths{}, err
		}
	}
	return p, nil
}

func writeSummary(buf *bytes.Buffer, s Summary) error {
	enc := json.NewEncoder(buf)
	enc.SetIndent("", "  ")
	if err := enc.Encode(s); err != nil {
		return fmt.Errorf("summary of run %s: %w", s.Run.ID, err)
	}
	return nil
}

// writeFile writes b to path through a temporary file and a rename, so a reader never
// sees half a report.
func writeFile(path string, b []byte) error {
	tmp := path + ".tmp"
	if err := os.WriteFile(tmp, b, 0o640); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("write %s: %w", path, err)
	}
	return nil
}

// FileName makes a run id usable as a file name.
func FileName(id string) string {
	b := []byte(id)
	for i, c := range b {
		ok := c == '-' || c == '_' || c == '.' || c >= '0' && c <= '9' || c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z'
		if !ok || i == 0 && c == '.' {
			b[i] = '_'
		}
	}
	if len(b) == 0 {
		return "run"
	}
	return string(b)
}

// RunReadings returns the readings of run's channel from its start to its stop (to
// the newest reading while it is active).
func RunReadings(j *journal.Journal, run journal.Run) ([]daq.Reading, error) {
	to := time.Time{}
	if !run.Active() {
		to = run.Stopped.Add(1)
	}
	var out []daq.Reading
	for r, err := range j.Readings(run.Channel, run.Started, to) {
		if err != nil {
			return nil, fmt.Errorf("readings of run %s: %w", run.ID, err)
		}
		out = append(out, r)
	}
	return out, nil
}

// Seq yields rs (with no errors), for WriteCSV.
func Seq(rs []daq.Reading) iter.Seq2[daq.Reading, error] {
	return func(yield func(daq.Reading, error) bool) {
		for _, r := range rs {
			if !yield(r, nil) {
				return
			}
		}
	}
}
