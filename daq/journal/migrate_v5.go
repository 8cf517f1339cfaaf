package journal

import (
	"context"
	"database/sql"
	"fmt"
	"strings"
)

// ddlV5: a reading's time is stored in ticks of 100 µs since the Unix epoch (see
// Tick for why that unit), which SQLite keeps in 6 bytes against 8 for nanoseconds:
// about 2 bytes less a reading, 9 % of its room. Everything else about a reading is as
// in ddlV4. Acknowledgements are rebuilt so that their segment start, a reading's time,
// is on a whole tick (still in nanoseconds). migrateV5 moves the rows over.
const ddlV5 = `CREATE TABLE readings_v5 (
		channel_id INTEGER NOT NULL REFERENCES channels(id),
		t          INTEGER NOT NULL, -- Unix time in ticks of 100 µs (journal.Tick)
		k          INTEGER NOT NULL, -- generation + 2^32 × ordinal among the channel's readings at t
		v          NOT NULL,         -- value and status: see encodeValue
		PRIMARY KEY (channel_id, t, k)
	) WITHOUT ROWID;
	CREATE TABLE raw_texts_v5 (
		channel_id INTEGER NOT NULL,
		t          INTEGER NOT NULL, -- as readings.t
		k          INTEGER NOT NULL,
		raw        TEXT NOT NULL, -- the field as received, for a fault
		PRIMARY KEY (channel_id, t, k)
	) WITHOUT ROWID;
	CREATE TABLE acknowledgements_v5 (
		channel TEXT NOT NULL,
		segment INTEGER NOT NULL, -- Unix nanoseconds, a whole tick: the specimen's segment start
		at      INTEGER NOT NULL,
		by      TEXT NOT NULL DEFAULT '',
		run_id  TEXT NOT NULL DEFAULT '',
		PRIMARY KEY (channel, segment)
	);`

// floorTickSQL is the SQL for a Unix-nanosecond column rounded down to ticks (SQLite's
// % keeps the sign of the dividend, so a time before 1970 is rounded down too).
func floorTickSQL(col string) string {
	return strings.NewReplacer("COL", col, "TICK", fmt.Sprint(tickNs)).Replace("((COL - ((COL % TICK) + TICK) % TICK) / TICK)")
}

// migrateV5 converts the version-4 rows to ticks, in the same transaction as ddlV5:
//
//   - readings: each time rounded down to its tick. Readings of one channel that fall
//     on the same tick (distinct nanoseconds less than 100 µs apart, or one time
//     written twice) keep their order, by nanosecond time and then as written: k keeps
//     its generation (the low 32 bits, for ReplayBefore) and takes as ordinal above it
//     the number of the channel's readings before it on that tick, as a new duplicate
//     would (see writes.insert). Written in key order, which packs the new pages full.
//   - raw_texts: each text follows its reading to the reading's new key. A text
//     without a reading (settle writes none; retention deletes a reading's text with
//     it) is shown by no query and is not carried over.
//   - acknowledgements: the segment start rounded down to its tick, as the replayed
//     readings' times are, so an acknowledgement still matches its specimen after a
//     restart; two of one channel on one tick are one specimen, of which the first
//     acknowledged is kept (as Acknowledge keeps the first).
//   - runs: see ticksRuns.
//
// It checks that every reading and every text with a reading was moved.
func migrateV5(ctx context.Context, tx *sql.Tx) error {
	tk := floorTickSQL("t")
	stmts := []string{
		`INSERT INTO readings_v5 (channel_id, t, k, v)
		SELECT channel_id, tk, (k & 4294967295) + ((row_number() OVER (PARTITION BY channel_id, tk ORDER BY t, k) - 1) << 32), v
		FROM (SELECT channel_id, t, k, v, ` + tk + ` AS tk FROM readings)
		ORDER BY channel_id, tk, t, k`,
		`INSERT INTO raw_texts_v5 (channel_id, t, k, raw)
		SELECT x.channel_id, ` + floorTickSQL("x.t") + `, (x.k & 4294967295) + ((SELECT count(*) FROM readings r
			WHERE r.channel_id = x.channel_id AND r.t >= ` + floorTickSQL("x.t") + ` * ` + fmt.Sprint(tickNs) + ` AND (r.t, r.k) < (x.t, x.k)) << 32), x.raw
		FROM raw_texts x WHERE EXISTS (SELECT 1 FROM readings r WHERE r.channel_id = x.channel_id AND r.t = x.t AND r.k = x.k)
		ORDER BY x.channel_id, x.t, x.k`,
	}
	for _, q := range stmts {
		if _, err := tx.ExecContext(ctx, q); err != nil {
			return err
		}
	}
	if err := sameCount(ctx, tx, "readings", "SELECT count(*) FROM readings", "SELECT count(*) FROM readings_v5"); err != nil {
		return err
	}
	if err := sameCount(ctx, tx, "fault texts", `SELECT count(*) FROM raw_texts x WHERE EXISTS
		(SELECT 1 FROM readings r WHERE r.channel_id = x.channel_id AND r.t = x.t AND r.k = x.k)`,
		"SELECT count(*) FROM raw_texts_v5"); err != nil {
		return err
	}
	if _, err := tx.ExecContext(ctx, `INSERT OR IGNORE INTO acknowledgements_v5 (channel, segment, at, by, run_id)
		SELECT channel, `+floorTickSQL("segment")+` * `+fmt.Sprint(tickNs)+`, at, by, run_id FROM acknowledgements ORDER BY at, segment`); err != nil {
		return err
	}
	if _, err := tx.ExecContext(ctx, `DROP TABLE readings; DROP TABLE raw_texts; DROP TABLE acknowledgements;
		ALTER TABLE readings_v5 RENAME TO readings; ALTER TABLE raw_texts_v5 RENAME TO raw_texts;
		ALTER TABLE acknowledgements_v5 RENAME TO acknowledgements`); err != nil {
		return err
	}
	return ticksRuns(ctx, tx)
}

// sameCount fails unless the two counts agree.
func sameCount(ctx context.Context, tx *sql.Tx, what, before, after string) error {
	var a, b int64
	if err := tx.QueryRowContext(ctx, before).Scan(&a); err != nil {
		return err
	}
	if err := tx.QueryRowContext(ctx, after).Scan(&b); err != nil {
		return err
	}
	if a != b {
		return fmt.Errorf("%d %s before, %d after the copy", a, what, b)
	}
	return nil
}

// ticksRuns rounds each run's start and stop down to their ticks: the readings they
// bound lost their time within the tick, and a run started at a reading's time (the
// placement rule's runs) keeps that reading. A run that started after the previous
// run of its channel stopped, and whose rounded start would fall at or before that
// stop (a start moved just after a stop, see clampStart), starts 1 ns after the
// rounded stop, so the two still share no reading: the reading on that tick stays the
// earlier run's. A stop is never moved before its run's start.
func ticksRuns(ctx context.Context, tx *sql.Tx) error {
	type run struct {
		id               string
		channel          string
		started, stopped sql.NullInt64
	}
	rows, err := tx.QueryContext(ctx, "SELECT id, channel, started, stopped FROM runs ORDER BY channel, started, id")
	if err != nil {
		return err
	}
	var all []run
	for rows.Next() {
		var r run
		if err := rows.Scan(&r.id, &r.channel, &r.started, &r.stopped); err != nil {
			rows.Close()
			return err
		}
		all = append(all, r)
	}
	if err := rows.Err(); err != nil {
		return err
	}
	rows.Close()
	upd, err := tx.PrepareContext(ctx, "UPDATE runs SET started = ?, stopped = ? WHERE id = ?")
	if err != nil {
		return err
	}
	defer upd.Close()
	var (
		channel           string
		lastStop, lastNew int64 // the channel's latest stop so far, as it was and rounded
		seen              bool
	)
	for _, r := range all {
		if r.channel != channel {
			channel, seen = r.channel, false
		}
		start := floorTick(r.started.Int64)
		if seen && r.started.Int64 > lastStop && start <= lastNew {
			start = lastNew + 1
		}
		stop := r.stopped
		if stop.Valid {
			stop.Int64 = max(floorTick(stop.Int64), start)
			if !seen || r.stopped.Int64 > lastStop {
				lastStop, lastNew, seen = r.stopped.Int64, stop.Int64, true
			}
		}
		if _, err := upd.ExecContext(ctx, start, stop, r.id); err != nil {
			return err
		}
	}
	return nil
}

// floorTick rounds Unix nanoseconds down to a whole tick, in nanoseconds.
func floorTick(ns int64) int64 {
	r := ns % tickNs
	if r < 0 {
		r += tickNs
	}
	return ns - r
}
