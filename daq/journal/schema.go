package journal

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
)

// SchemaVersion is the schema version this package writes (SQLite user_version).
const SchemaVersion = 3

// ErrSchemaTooNew is returned by Open when the file was written by a newer settle.
var ErrSchemaTooNew = errors.New("journal: schema is newer than this settle understands")

// migrations[i] moves the schema from version i to i+1.
var migrations = []string{
	`CREATE TABLE channels (
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
	);`,
	// 2: a crossing (and a forecast) whose time is the fitted one inside a gap of the
	// readings, or at a surface-sensed specimen's unseen core, is marked estimated.
	`ALTER TABLE crossings ADD COLUMN estimated INTEGER NOT NULL DEFAULT 0;
	ALTER TABLE forecasts ADD COLUMN estimated INTEGER NOT NULL DEFAULT 0;`,
	// 3: a technician's acknowledgement that a ready specimen was seen (from the page
	// or the API), one per channel and specimen (the fit's segment start).
	`CREATE TABLE acknowledgements (
		channel TEXT NOT NULL,
		segment INTEGER NOT NULL, -- Unix nanoseconds: the specimen's segment start
		at      INTEGER NOT NULL,
		by      TEXT NOT NULL DEFAULT '',
		run_id  TEXT NOT NULL DEFAULT '',
		PRIMARY KEY (channel, segment)
	);`,
}

// migrate brings the schema of db up to SchemaVersion, one transaction per step.
func migrate(ctx context.Context, db *sql.DB, path string) error {
	var v int
	if err := db.QueryRowContext(ctx, "PRAGMA user_version").Scan(&v); err != nil {
		return fmt.Errorf("journal %s: read schema version: %w", path, err)
	}
	if v > len(migrations) {
		return fmt.Errorf("journal %s: version %d, this settle knows up to %d: %w", path, v, len(migrations), ErrSchemaTooNew)
	}
	for ; v < len(migrations); v++ {
		if err := migrateStep(ctx, db, v); err != nil {
			return fmt.Errorf("journal %s: migrate schema %d→%d: %w", path, v, v+1, err)
		}
	}
	return nil
}

func migrateStep(ctx context.Context, db *sql.DB, from int) error {
	tx, err := db.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	if _, err := tx.ExecContext(ctx, migrations[from]); err != nil {
		return err
	}
	// PRAGMA takes no bound parameters; the value is our own integer.
	if _, err := tx.ExecContext(ctx, fmt.Sprintf("PRAGMA user_version = %d", from+1)); err != nil {
		return err
	}
	return tx.Commit()
}
