package journal

import (
	"context"
	"database/sql"
	"fmt"
	"time"
)

// ForecastPoint is one stored forecast of one target of a run.
type ForecastPoint struct {
	// Time is when the forecast was made (the time of the last reading it used).
	Time time.Time `json:"time"`
	// Target is the target's name.
	Target string `json:"target"`
	// State is the forecast state (predict.State as text).
	State string `json:"state"`
	// At is the predicted (or, when reached, observed) crossing; Earliest and Latest
	// bound it. Zero when the state has none.
	At       time.Time `json:"at,omitzero"`
	Earliest time.Time `json:"earliest,omitzero"`
	Latest   time.Time `json:"latest,omitzero"`
	// Estimated marks a reached At that is the fitted crossing (inside a gap of the
	// readings, or at an unseen core), not a reading's time.
	Estimated bool `json:"estimated,omitempty"`
	// Reached is the caller's word that State is the forecast state "target reached"
	// (the journal stores State as given and knows no forecast states): the first
	// point of a target so marked also stores its At as the run's crossing. It is
	// not stored itself; points read back (ForecastHistory) leave it false.
	Reached bool `json:"-"`
}

type fcKey struct{ run, target string }

type forecastRow struct {
	run string
	ForecastPoint
	crossing bool
}

// RecordForecast queues a forecast of one target of run for the next commit when it
// differs meaningfully from the last one recorded (see Options.ForecastMinShift): a
// new state, or a predicted time or bound that moved. The first point of a target marked
// Reached also stores its At as the run's crossing (marked estimated when p is). It
// reports whether the point was queued; it never blocks on the disk.
func (j *Journal) RecordForecast(runID string, p ForecastPoint) bool {
	return j.record(runID, p, j.significant)
}

// RecordFinalForecast is RecordForecast without the test for a meaningful change: the
// point is queued unless it equals the last one recorded. The daemon calls it with a
// run's forecast as the run stops (or as the daemon stops), so that the history ends
// with the forecast the daemon last showed, and a report replays exactly the readings
// that forecast used.
func (j *Journal) RecordFinalForecast(runID string, p ForecastPoint) bool {
	return j.record(runID, p, func(prev, cur ForecastPoint) bool { return prev != cur })
}

// record queues p for the next commit unless a point of the same run and target was
// recorded before and changed reports no change from it. The first point of a target
// marked Reached also stores its At as the run's crossing.
func (j *Journal) record(runID string, p ForecastPoint, changed func(prev, cur ForecastPoint) bool) bool {
	cur := forecastRow{run: runID, ForecastPoint: p}
	k := fcKey{runID, p.Target}
	j.mu.Lock()
	defer j.mu.Unlock()
	if j.opt.ReadOnly {
		return false
	}
	prev, seen := j.lastFc[k]
	if seen && !changed(prev.ForecastPoint, p) {
		return false
	}
	cur.crossing = p.Reached && (!seen || !prev.Reached)
	j.lastFc[k] = cur
	j.fqueue = append(j.fqueue, cur)
	return true
}

// significant reports whether cur differs meaningfully from prev.
func (j *Journal) significant(prev, cur ForecastPoint) bool {
	if prev.State != cur.State {
		return true
	}
	thr := j.opt.ForecastMinShift
	if rel := time.Duration(j.opt.ForecastRelShift * float64(cur.At.Sub(cur.Time))); rel > thr {
		thr = rel
	}
	return moved(prev.At, cur.At, thr) || moved(prev.Earliest, cur.Earliest, thr) || moved(prev.Latest, cur.Latest, thr)
}

func moved(a, b time.Time, thr time.Duration) bool {
	if a.IsZero() != b.IsZero() {
		return true
	}
	d := a.Sub(b)
	return d > thr || -d > thr
}

// forgetForecasts drops the in-memory last points of a stopped run.
func (j *Journal) forgetForecasts(runID string) {
	j.mu.Lock()
	defer j.mu.Unlock()
	for k := range j.lastFc {
		if k.run == runID {
			delete(j.lastFc, k)
		}
	}
}

func insertForecasts(ctx context.Context, tx *sql.Tx, fcs []forecastRow) error {
	for _, f := range fcs {
		_, err := tx.ExecContext(ctx, "INSERT INTO forecasts (run_id, t, target, state, at, earliest, latest, estimated) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
			f.run, f.Time.UnixNano(), f.Target, f.State, nsNull(f.At), nsNull(f.Earliest), nsNull(f.Latest), f.Estimated)
		if err != nil {
			return fmt.Errorf("run %s target %s: %w", f.run, f.Target, err)
		}
		if f.crossing && !f.At.IsZero() {
			_, err := tx.ExecContext(ctx, "INSERT OR IGNORE INTO crossings (run_id, target, at, estimated) VALUES (?, ?, ?, ?)",
				f.run, f.Target, f.At.UnixNano(), f.Estimated)
			if err != nil {
				return fmt.Errorf("run %s crossing of %s: %w", f.run, f.Target, err)
			}
		}
	}
	return nil
}

// ForecastHistory returns the stored forecasts of run, by time then target.
func (j *Journal) ForecastHistory(runID string) ([]ForecastPoint, error) {
	db, err := j.reader()
	if err != nil {
		return nil, err
	}
	rows, err := db.Query("SELECT t, target, state, at, earliest, latest, estimated FROM forecasts WHERE run_id = ? ORDER BY t, target, rowid", runID)
	if err != nil {
		return nil, fmt.Errorf("journal %s: forecast history of run %s: %w", j.path, runID, err)
	}
	defer rows.Close()
	var out []ForecastPoint
	for rows.Next() {
		var (
			p          ForecastPoint
			t          int64
			at, lo, hi sql.NullInt64
		)
		if err := rows.Scan(&t, &p.Target, &p.State, &at, &lo, &hi, &p.Estimated); err != nil {
			return nil, fmt.Errorf("journal %s: forecast history of run %s: %w", j.path, runID, err)
		}
		p.Time, p.At, p.Earliest, p.Latest = time.Unix(0, t), nsTime(at), nsTime(lo), nsTime(hi)
		out = append(out, p)
	}
	return out, rows.Err()
}

// Crossings returns the observed crossing time of each reached target of run.
func (j *Journal) Crossings(runID string) (map[string]time.Time, error) {
	db, err := j.reader()
	if err != nil {
		return nil, err
	}
	rows, err := db.Query("SELECT target, at FROM crossings WHERE run_id = ?", runID)
	if err != nil {
		return nil, fmt.Errorf("journal %s: crossings of run %s: %w", j.path, runID, err)
	}
	defer rows.Close()
	out := map[string]time.Time{}
	for rows.Next() {
		var (
			name string
			at   int64
		)
		if err := rows.Scan(&name, &at); err != nil {
			return nil, fmt.Errorf("journal %s: crossings of run %s: %w", j.path, runID, err)
		}
		out[name] = time.Unix(0, at)
	}
	return out, rows.Err()
}

// EstimatedCrossings names the targets of run whose recorded crossing is estimated
// (the fitted crossing inside a gap of the readings, or at an unseen core).
func (j *Journal) EstimatedCrossings(runID string) (map[string]bool, error) {
	db, err := j.reader()
	if err != nil {
		return nil, err
	}
	rows, err := db.Query("SELECT target FROM crossings WHERE run_id = ? AND estimated != 0", runID)
	if err != nil {
		return nil, fmt.Errorf("journal %s: estimated crossings of run %s: %w", j.path, runID, err)
	}
	defer rows.Close()
	out := map[string]bool{}
	for rows.Next() {
		var name string
		if err := rows.Scan(&name); err != nil {
			return nil, fmt.Errorf("journal %s: estimated crossings of run %s: %w", j.path, runID, err)
		}
		out[name] = true
	}
	return out, rows.Err()
}
