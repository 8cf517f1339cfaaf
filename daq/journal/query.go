package journal

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"iter"
	"math"
	"time"

	"github.com/settle-lab/settle/daq"
)

// readingCols are the columns scanReading reads, from readings r joined with channels c
// (readingFrom).
const readingCols = "c.logger, c.name, r.t, r.v, coalesce(x.raw, '')"

// readingFrom joins a reading with its channel and its raw text, if any.
const readingFrom = " FROM readings r JOIN channels c ON c.id = r.channel_id" +
	" LEFT JOIN raw_texts x ON x.channel_id = r.channel_id AND x.t = r.t AND x.k = r.k"

// scanReading reads one row of readingCols.
func scanReading(rows interface{ Scan(...any) error }) (daq.Reading, error) {
	var (
		r  daq.Reading
		tk int64 // ticks since the Unix epoch
		v  any
	)
	if err := rows.Scan(&r.Logger, &r.Channel, &tk, &v, &r.Raw); err != nil {
		return r, err
	}
	r.Time = tickTime(tk)
	c, s, err := decodeValue(v)
	if err != nil {
		return r, fmt.Errorf("reading of %s at %s: %w", r.Channel, r.Time.UTC().Format(time.RFC3339Nano), err)
	}
	r.Celsius, r.Status = c, s
	return r, nil
}

// Readings yields the committed readings of channel with from <= Time < to, oldest
// first (readings with the same time in the order they were written). Time is as the
// journal gives it back, the time written truncated to a Tick (see loTick); a zero
// from or to leaves that end open. The error, if any, comes with a zero
// reading as the last pair.
func (j *Journal) Readings(channel string, from, to time.Time) iter.Seq2[daq.Reading, error] {
	q := "SELECT " + readingCols + readingFrom +
		" WHERE r.channel_id IN (SELECT id FROM channels WHERE name = ?) AND r.t >= ? AND r.t < ? ORDER BY r.t, r.k"
	return j.query(fmt.Sprintf("readings of %s", channel), q, channel, loTick(from), hiTick(to))
}

// Replay calls fn with every committed reading with Time >= since (Time as in
// Readings), of all channels, in time order (readings with the same time by channel,
// in the order the channels were first journaled, which for one logger's line is its
// column order), so a restarted daemon can rebuild its trackers.
func (j *Journal) Replay(since time.Time, fn func(daq.Reading)) error {
	return j.ReplayBefore(since, math.MaxInt64, func(r daq.Reading) bool { fn(r); return true })
}

// LastSeq returns a mark that tells the readings committed so far from later ones
// (for ReplayBefore and ReplayStarts). On a journal open for writing it starts a new
// generation: readings committed from now on carry the next one (at most one a daemon
// start: the generation lives in each reading's key, where a small number takes one
// byte); when the mark cannot be written (a full disk) it is the current generation.
// On a read-only journal it is the newest generation.
func (j *Journal) LastSeq() (int64, error) {
	if j.opt.ReadOnly {
		db, err := j.reader()
		if err != nil {
			return 0, err
		}
		var gen int64
		if err := db.QueryRow("SELECT coalesce(max(gen), 0) FROM marks").Scan(&gen); err != nil {
			return 0, fmt.Errorf("journal %s: last mark: %w", j.path, err)
		}
		return gen, nil
	}
	j.flushMu.Lock()
	defer j.flushMu.Unlock()
	db := j.writer()
	if db == nil {
		return 0, fmt.Errorf("%w: %s", ErrUnavailable, j.path)
	}
	if _, err := db.Exec("INSERT INTO marks (gen) VALUES (?)", j.gen+1); err != nil {
		// A full disk refuses the new mark: the current generation still marks every
		// reading committed so far (and a full disk commits none meanwhile), so the
		// daemon resumes its history rather than starting every channel empty.
		j.log.Warn("journal: no new generation mark; resuming from the current one", "path", j.path, "err", err)
		return j.gen, nil
	}
	j.gen++
	return j.gen - 1, nil
}

// ReplayBefore is Replay restricted to the readings committed by the mark seq (see
// LastSeq): the record as it stood at a mark, whatever the readings' clocks. It stops
// early, without error, when fn returns false.
func (j *Journal) ReplayBefore(since time.Time, seq int64, fn func(daq.Reading) bool) error {
	// Each channel's readings are one range of the key (channel, time): the IN list
	// makes SQLite seek each range rather than scan the table, then merge by time.
	q := "SELECT " + readingCols + readingFrom +
		" WHERE r.channel_id IN (SELECT id FROM channels) AND r.t >= ? AND (r.k & 4294967295) <= ?" +
		" ORDER BY r.t, r.channel_id, r.k"
	for r, err := range j.query("replay", q, loTick(since), seq) {
		if err != nil {
			return err
		}
		if !fn(r) {
			return nil
		}
	}
	return nil
}

// ReplayStarts returns, for every channel, the time of its perChannel-th newest
// committed reading with Time >= since and committed by the mark seq (since when it has
// fewer). ReplayBefore from the earliest of them, skipping each channel's
// readings before its own start, feeds at most perChannel readings of each channel: a
// restart's cost stays bounded however fast the loggers read.
func (j *Journal) ReplayStarts(since time.Time, seq int64, perChannel int) (map[string]time.Time, error) {
	db, err := j.reader()
	if err != nil {
		return nil, err
	}
	rows, err := db.Query("SELECT id, name FROM channels")
	if err != nil {
		return nil, fmt.Errorf("journal %s: list channels: %w", j.path, err)
	}
	ids := map[int64]string{}
	for rows.Next() {
		var id int64
		var name string
		if err := rows.Scan(&id, &name); err != nil {
			rows.Close()
			return nil, fmt.Errorf("journal %s: list channels: %w", j.path, err)
		}
		ids[id] = name
	}
	rows.Close()
	out := map[string]time.Time{}
	for id, name := range ids {
		var tk int64
		err := db.QueryRow("SELECT t FROM readings WHERE channel_id = ? AND t >= ? AND (k & 4294967295) <= ? ORDER BY t DESC LIMIT 1 OFFSET ?",
			id, loTick(since), seq, perChannel-1).Scan(&tk)
		switch {
		case errors.Is(err, sql.ErrNoRows):
			out[name] = since
		case err != nil:
			return nil, fmt.Errorf("journal %s: replay start of %s: %w", j.path, name, err)
		default:
			if t := tickTime(tk); t.After(out[name]) {
				out[name] = t
			}
		}
	}
	return out, nil
}

// Latest returns the newest committed reading of every channel, by channel name.
func (j *Journal) Latest() (map[string]daq.Reading, error) {
	// Each channel's newest time, then the readings at it (newest written first).
	q := "SELECT " + readingCols + " FROM channels c JOIN readings r ON r.channel_id = c.id" +
		" AND r.t = (SELECT max(t) FROM readings WHERE channel_id = c.id)" +
		" LEFT JOIN raw_texts x ON x.channel_id = r.channel_id AND x.t = r.t AND x.k = r.k ORDER BY r.k DESC"
	out := map[string]daq.Reading{}
	for r, err := range j.query("latest readings", q) {
		if err != nil {
			return nil, err
		}
		if old, ok := out[r.Channel]; !ok || r.Time.After(old.Time) {
			out[r.Channel] = r
		}
	}
	return out, nil
}

// Count returns the number of committed readings of channel (all channels when empty).
func (j *Journal) Count(channel string) (int64, error) {
	db, err := j.reader()
	if err != nil {
		return 0, err
	}
	q, args := "SELECT count(*) FROM readings", []any{}
	if channel != "" {
		q += " WHERE channel_id IN (SELECT id FROM channels WHERE name = ?)"
		args = append(args, channel)
	}
	var n int64
	if err := db.QueryRow(q, args...).Scan(&n); err != nil {
		return 0, fmt.Errorf("journal %s: count readings: %w", j.path, err)
	}
	return n, nil
}

func (j *Journal) query(what, q string, args ...any) iter.Seq2[daq.Reading, error] {
	return func(yield func(daq.Reading, error) bool) {
		db, err := j.reader()
		if err != nil {
			yield(daq.Reading{}, err)
			return
		}
		ctx, cancel := context.WithCancel(context.Background())
		defer cancel()
		rows, err := db.QueryContext(ctx, q, args...)
		if err != nil {
			yield(daq.Reading{}, fmt.Errorf("journal %s: %s: %w", j.path, what, err))
			return
		}
		defer rows.Close()
		for rows.Next() {
			r, err := scanReading(rows)
			if err != nil {
				yield(daq.Reading{}, fmt.Errorf("journal %s: %s: %w", j.path, what, err))
				return
			}
			if !yield(r, nil) {
				return
			}
		}
		if err := rows.Err(); err != nil {
			yield(daq.Reading{}, fmt.Errorf("journal %s: %s: %w", j.path, what, err))
		}
	}
}

// lo and hi turn an optional time bound into Unix nanoseconds (for runs; the bounds
// on readings' times are loTick and hiTick).
func lo(t time.Time) int64 {
	if t.IsZero() {
		return math.MinInt64
	}
	return t.UnixNano()
}

func hi(t time.Time) int64 {
	if t.IsZero() {
		return math.MaxInt64
	}
	return t.UnixNano()
}

// nsTime turns a nullable Unix-nanosecond column into a time (zero for NULL).
func nsTime(v sql.NullInt64) time.Time {
	if !v.Valid {
		return time.Time{}
	}
	return time.Unix(0, v.Int64)
}

// nsNull stores a zero time as NULL.
func nsNull(t time.Time) sql.NullInt64 {
	if t.IsZero() {
		return sql.NullInt64{}
	}
	return sql.NullInt64{Int64: t.UnixNano(), Valid: true}
}

// Channels returns the names of every channel the journal has readings of (ever, not
// only of the readings kept), sorted.
func (j *Journal) Channels() ([]string, error) {
	db, err := j.reader()
	if err != nil {
		return nil, err
	}
	rows, err := db.Query("SELECT DISTINCT name FROM channels ORDER BY name")
	if err != nil {
		return nil, fmt.Errorf("journal %s: list channels: %w", j.path, err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var name string
		if err := rows.Scan(&name); err != nil {
			return nil, fmt.Errorf("journal %s: list channels: %w", j.path, err)
		}
		out = append(out, name)
	}
	return out, rows.Err()
}
