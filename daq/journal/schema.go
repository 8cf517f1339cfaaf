package journal

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"

	"github.com/settle-lab/settle/daq"
)

// SchemaVersion is the schema version this package writes (SQLite user_version).
const SchemaVersion = 5

// ErrSchemaTooNew is returned by Open when the file was written by a newer settle.
var ErrSchemaTooNew = errors.New("journal: schema is newer than this settle understands")

// migrations[i] moves the schema from version i to i+1: its statements, then (from
// version 3 on) a step in Go, in the same transaction.
var migrations = []migration{{sql: ddlV1}, {sql: ddlV2}, {sql: ddlV3}, {sql: ddlV4, data: copyReadingsV4},
	{sql: ddlV5, data: migrateV5}}

// migration is one schema step: statements, then an optional data step.
type migration struct {
	sql  string
	data func(context.Context, *sql.Tx) error
}

// ddlV1 is the first schema (its statements are kept as written then: a test builds a
// version-3 file from ddlV1..ddlV3).
const ddlV1 = `CREATE TABLE channels (
		id     INTEGER PRIMARY KEY,
		logger TEXT NOT NULL,
		name   TEXT NOT NULL,
		UNIQUE (logger, name)
	);
	CREATE TABLE readings (
		seq        INTEGER PRIMARY KEY,
		channel_id INTEGER NOT NULL REFERENCES channels(id),
		t          INTEGER NOT NULL, -- Unix nanoseconds
		celsius    REAL,             -- NULL when NaN
		status     TEXT NOT NULL,    -- daq.Status.String()
		raw        TEXT NOT NULL DEFAULT ''
	);
	CREATE INDEX readings_channel_t ON readings (channel_id, t);
	CREATE INDEX readings_t ON readings (t);
	CREATE TABLE runs (
		id            TEXT PRIMARY KEY,
		channel       TEXT NOT NULL,
		specimen      TEXT NOT NULL,
		description   TEXT NOT NULL DEFAULT '',
		specimen_spec TEXT NOT NULL DEFAULT '',
		targets       TEXT NOT NULL DEFAULT '',
		origin        TEXT NOT NULL DEFAULT '',
		started       INTEGER NOT NULL,
		stopped       INTEGER,
		summary       TEXT NOT NULL DEFAULT '',
		pruned        TEXT NOT NULL DEFAULT ''
	);
	CREATE UNIQUE INDEX runs_active ON runs (channel) WHERE stopped IS NULL;
	CREATE TABLE forecasts (
		run_id   TEXT NOT NULL,
		t        INTEGER NOT NULL,
		target   TEXT NOT NULL,
		state    TEXT NOT NULL,
		at       INTEGER,
		earliest INTEGER,
		latest   INTEGER
	);
	CREATE INDEX forecasts_run ON forecasts (run_id, target, t);
	CREATE TABLE crossings (
		run_id TEXT NOT NULL,
		target TEXT NOT NULL,
		at     INTEGER NOT NULL,
		PRIMARY KEY (run_id, target)
	);`

// ddlV2: a crossing (and a forecast) whose time is the fitted one inside a gap of the
// readings, or at a surface-sensed specimen's unseen core, is marked estimated.
const ddlV2 = `ALTER TABLE crossings ADD COLUMN estimated INTEGER NOT NULL DEFAULT 0;
	ALTER TABLE forecasts ADD COLUMN estimated INTEGER NOT NULL DEFAULT 0;`

// ddlV3: a technician's acknowledgement that a ready specimen was seen (from the page
// or the API), one per channel and specimen (the fit's segment start).
const ddlV3 = `CREATE TABLE acknowledgements (
		channel TEXT NOT NULL,
		segment INTEGER NOT NULL, -- Unix nanoseconds: the specimen's segment start
		at      INTEGER NOT NULL,
		by      TEXT NOT NULL DEFAULT '',
		run_id  TEXT NOT NULL DEFAULT '',
		PRIMARY KEY (channel, segment)
	);`

// ddlV4 (kept as written then: tests build a version-4 file from ddlV1..ddlV4):
// readings take about a third of the room (70 bytes a reading before, about 23 after).
// One b-tree keyed by channel and time serves every query (no rowid, no second
// index on time); the value and status share one column (see encodeValue); the text of
// a fault goes to raw_texts, so an ok reading carries no empty text; the mark that
// tells readings committed before a restart from later ones is a small generation
// number (table marks, see LastSeq) in k, which also tells apart readings of one
// channel with the same time: k = generation + 2^32 × (how many came before it), so
// k orders them as written.
// copyReadingsV4 moves the readings over.
const ddlV4 = `CREATE TABLE readings_v4 (
		channel_id INTEGER NOT NULL REFERENCES channels(id),
		t          INTEGER NOT NULL, -- Unix nanoseconds
		k          INTEGER NOT NULL, -- generation + 2^32 × duplicate ordinal
		v          NOT NULL,         -- value and status: see encodeValue
		PRIMARY KEY (channel_id, t, k)
	) WITHOUT ROWID;
	CREATE TABLE raw_texts (
		channel_id INTEGER NOT NULL,
		t          INTEGER NOT NULL,
		k          INTEGER NOT NULL,
		raw        TEXT NOT NULL, -- the field as received, for a fault
		PRIMARY KEY (channel_id, t, k)
	) WITHOUT ROWID;
	CREATE TABLE marks (gen INTEGER PRIMARY KEY);
	INSERT INTO marks VALUES (0);`

// copyReadingsV4 copies every version-3 reading into readings_v4 (generation 0, in
// key order, which packs the new b-tree's pages full) and its text into raw_texts,
// then drops the old table and its two indexes.
func copyReadingsV4(ctx context.Context, tx *sql.Tx) error {
	rows, err := tx.QueryContext(ctx, `SELECT channel_id, t,
		row_number() OVER (PARTITION BY channel_id, t ORDER BY seq) - 1, celsius, status, raw
		FROM readings ORDER BY channel_id, t, seq`)
	if err != nil {
		return err
	}
	defer rows.Close()
	ins, err := tx.PrepareContext(ctx, "INSERT INTO readings_v4 (channel_id, t, k, v) VALUES (?, ?, ?, ?)")
	if err != nil {
		return err
	}
	defer ins.Close()
	insRaw, err := tx.PrepareContext(ctx, "INSERT INTO raw_texts (channel_id, t, k, raw) VALUES (?, ?, ?, ?)")
	if err != nil {
		return err
	}
	defer insRaw.Close()
	for rows.Next() {
		var (
			id, t, dup int64
			c          sql.NullFloat64
			st, raw    string
		)
		if err := rows.Scan(&id, &t, &dup, &c, &st, &raw); err != nil {
			return err
		}
		k := dup << 32
		if _, err := ins.ExecContext(ctx, id, t, k, encodeValue(v3Celsius(c), v3Status(st))); err != nil {
			return err
		}
		if raw != "" {
			if _, err := insRaw.ExecContext(ctx, id, t, k, raw); err != nil {
				return err
			}
		}
	}
	if err := rows.Err(); err != nil {
		return err
	}
	_, err = tx.ExecContext(ctx, "DROP TABLE readings; ALTER TABLE readings_v4 RENAME TO readings")
	return err
}

// v3Celsius reads version 3's celsius column (NULL for NaN).
func v3Celsius(c sql.NullFloat64) float64 {
	if !c.Valid {
		return math.NaN()
	}
	return c.Float64
}

// v3Status reads version 3's status column (a name; one this settle does not know
// becomes Status(255), which prints as "unknown", as version 3 read it).
func v3Status(name string) daq.Status {
	if s, ok := daq.ParseStatus(name); ok {
		return s
	}
	return daq.Status(255)
}

// migrate brings the schema of db up to SchemaVersion, one transaction per step, and
// returns the version it found.
func migrate(ctx context.Context, db *sql.DB, path string) (int, error) {
	var v int
	if err := db.QueryRowContext(ctx, "PRAGMA user_version").Scan(&v); err != nil {
		return 0, fmt.Errorf("journal %s: read schema version: %w", path, err)
	}
	if v > len(migrations) {
		return v, fmt.Errorf("journal %s: version %d, this settle knows up to %d: %w", path, v, len(migrations), ErrSchemaTooNew)
	}
	for from := v; from < len(migrations); from++ {
		if err := migrateStep(ctx, db, from); err != nil {
			return v, fmt.Errorf("journal %s: migrate schema %d→%d: %w", path, from, from+1, err)
		}
	}
	return v, nil
}

func migrateStep(ctx context.Context, db *sql.DB, from int) error {
	tx, err := db.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	m := migrations[from]
	if _, err := tx.ExecContext(ctx, m.sql); err != nil {
		return err
	}
	if m.data != nil {
		if err := m.data(ctx, tx); err != nil {
			return err
		}
	}
	// PRAGMA takes no bound parameters; the value is our own integer.
	if _, err := tx.ExecContext(ctx, fmt.Sprintf("PRAGMA user_version = %d", from+1)); err != nil {
		return err
	}
	return tx.Commit()
}
