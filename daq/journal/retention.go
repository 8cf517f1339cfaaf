package journal

import (
	"context"
	"encoding/json"
	"fmt"
	"time"
)

// Retention says what happens to the raw readings of finished runs. Run rows, their
// summaries, forecast histories and crossings are always kept.
type Retention struct {
	// Age is how long after a run stops its readings are kept in full. Zero means
	// forever (no pruning).
	Age time.Duration
	// Keep thins instead of dropping: the first reading of each Keep-long slot of the
	// run stays. Zero drops the run's readings.
	Keep time.Duration
}

// PruneStats says what a Prune did.
type PruneStats struct {
	// Runs is the number of runs pruned.
	Runs int
	// Deleted is the number of readings deleted.
	Deleted int64
}

// Prune applies p to the runs that stopped before now - p.Age and were not pruned
// yet. A run without a summary gets one first, so the summary survives.
func (j *Journal) Prune(now time.Time, p Retention) (PruneStats, error) {
	var st PruneStats
	if p.Age <= 0 {
		return st, nil
	}
	if _, err := j.writeDB(); err != nil {
		return st, err
	}
	runs, err := j.prunable(now.Add(-p.Age))
	if err != nil {
		return st, err
	}
	for _, run := range runs {
		if run.Summary == nil {
			sum, err := j.summarize(run)
			if err != nil {
				return st, err
			}
			if err := j.saveSummary(run.ID, sum); err != nil {
				return st, err
			}
		}
		n, err := j.pruneRun(context.Background(), run, p.Keep)
		if err != nil {
			return st, fmt.Errorf("journal %s: prune run %s: %w", j.path, run.ID, err)
		}
		st.Runs++
		st.Deleted += n
	}
	return st, nil
}

// prunable lists the stopped, unpruned runs that stopped before cutoff.
func (j *Journal) prunable(cutoff time.Time) ([]Run, error) {
	db, err := j.reader()
	if err != nil {
		return nil, err
	}
	rows, err := db.Query("SELECT "+runCols+" FROM runs WHERE stopped IS NOT NULL AND stopped < ? AND pruned = '' ORDER BY started", cutoff.UnixNano())
	if err != nil {
		return nil, fmt.Errorf("journal %s: list runs to prune: %w", j.path, err)
	}
	defer rows.Close()
	var out []Run
	for rows.Next() {
		r, err := scanRun(rows)
		if err != nil {
			return nil, fmt.Errorf("journal %s: list runs to prune: %w", j.path, err)
		}
		out = append(out, r)
	}
	return out, rows.Err()
}

func (j *Journal) saveSummary(id string, sum Summary) error {
	db, err := j.writeDB()
	if err != nil {
		return err
	}
	b, err := json.Marshal(sum)
	if err != nil {
		return fmt.Errorf("summary of run %s: %w", id, err)
	}
	if _, err := db.Exec("UPDATE runs SET summary = ? WHERE id = ?", string(b), id); err != nil {
		return fmt.Errorf("journal %s: save summary of run %s: %w", j.path, id, err)
	}
	return nil
}

// pruneRun deletes (keep == 0) or thins the readings of one run in one transaction.
func (j *Journal) pruneRun(ctx context.Context, run Run, keep time.Duration) (int64, error) {
	db, err := j.writeDB()
	if err != nil {
		return 0, err
	}
	tx, err := db.BeginTx(ctx, nil)
	if err != nil {
		return 0, err
	}
	defer tx.Rollback()
	// The run's readings are those Readings gives for it: Started <= Time <= Stopped,
	// in ticks (see loTick).
	span := "channel_id IN (SELECT id FROM channels WHERE name = ?1) AND t >= ?2 AND t <= ?3"
	q, mark := "DELETE FROM readings WHERE "+span, "dropped"
	args := []any{run.Channel, loTick(run.Started), lastTick(run.Stopped)}
	if keep > 0 {
		// The first reading (by time, then as written) of each keep-long slot stays
		// (slots of whole ticks, at least one).
		q += " AND (channel_id, t, k) NOT IN (SELECT channel_id, t, k FROM (SELECT channel_id, t, k," +
			" row_number() OVER (PARTITION BY (t - ?2) / ?4 ORDER BY t, k) AS n FROM readings WHERE " + span + ") WHERE n = 1)"
		args, mark = append(args, max(keep.Nanoseconds()/tickNs, 1)), "thinned"
	}
	res, err := tx.ExecContext(ctx, q, args...)
	if err != nil {
		return 0, err
	}
	n, err := res.RowsAffected()
	if err != nil {
		return 0, err
	}
	// The raw texts of the readings gone go with them.
	if _, err := tx.ExecContext(ctx, "DELETE FROM raw_texts AS x WHERE "+span+" AND NOT EXISTS"+
		" (SELECT 1 FROM readings r WHERE r.channel_id = x.channel_id AND r.t = x.t AND r.k = x.k)", args[:3]...); err != nil {
		return 0, err
	}
	if _, err := tx.ExecContext(ctx, "UPDATE runs SET pruned = ? WHERE id = ?", mark, run.ID); err != nil {
		return 0, err
	}
	return n, tx.Commit()
}
