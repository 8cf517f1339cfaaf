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

const readingCols = "c.logger, c.name, r.t, r.celsius, r.status, r.raw"

// scanReading reads one row of readingCols.
func scanReading(rows interface{ Scan(...any) error }) (daq.Reading, error) {
	var (
		r  daq.Reading
		ns int64
		c  sql.NullFloat64
		st string
	)
	if err := rows.Scan(&r.Logger, &r.Channel, &ns, &c, &st, &r.Raw); err != nil {
		return r, err
	}
	r.Time = time.Unix(0, ns)
	r.Celsius = math.NaN()
	if c.Valid {
		r.Celsius = c.Float64
	}
	s, ok := daq.ParseStatus(st)
	if !ok {
		s = daq.Status(255) // String() gives "unknown"
	}
	r.Status = s
	return r, nil
}

// Readings yields the committed readings of channel with from <= Time < to, oldest
// first. A zero from or to leaves that end open. The error, if any, comes with a zero
// reading as the last pair.
func (j *Journal) Readings(channel string, from, to time.Time) iter.Seq2[daq.Reading, error] {
	q := "SELECT " + readingCols + " FROM readings r JOIN channels c ON c.id = r.channel_id" +
		" WHERE c.name = ? AND r.t >= ? AND r.t < ? ORDER BY r.t, r.seq"
	return j.query(fmt.Sprintf("readings of %s", channel), q, channel, lo(from), hi(to))
}

// Replay calls fn with every committed reading with Time >= since, of all channels, in
// time order, so a restarted daemon can rebuild its trackers.
func (j *Journal) Replay(since time.Time, fn func(daq.Reading)) error {
	q := "SELECT " + readingCols + " FROM readings r JOIN channels c ON c.id = r.channel_id" +
		" WHERE r.t >= ? ORDER BY r.t, r.seq"
	for r, err := range j.query("replay", q, lo(since)) {
		if err != nil {
			return err
		}
		fn(r)
	}
	return nil
}

// LastSeq returns the sequence number of the newest committed reading (0 when none):
// a mark that tells the readings committed so far from later ones.
func (j *Journal) LastSeq() (int64, error) {
	db, err := j.reader()
	if err != nil {
		return 0, err
	}
	var seq sql.NullInt64
	if err := db.QueryRow("SELECT max(seq) FROM readings").Scan(&seq); err != nil {
		return 0, fmt.Errorf("journal %s: last reading: %w", j.path, err)
	}
	return seq.Int64, nil
}

// ReplayBefore is Replay restricted to the readings with a sequence number of at most
// seq (see LastSeq): the record as it stood at a mark, whatever the readings' clocks.
// It stops early, without error, when fn returns false.
func (j *Journal) ReplayBefore(since time.Time, seq int64, fn func(daq.Reading) bool) error {
	q := "SELECT " + readingCols + " FROM readings r JOIN channels c ON c.id = r.channel_id" +
		" WHERE r.t >= ? AND r.seq <= ? ORDER BY r.t, r.seq"
	for r, err := range j.query("replay", q, lo(since), seq) {
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
// committed reading with Time >= since and a sequence number of at most seq (since
// when it has fewer). ReplayBefore from the earliest of them, skipping each channel's
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
		var ns int64
		err := db.QueryRow("SELECT t FROM readings WHERE channel_id = ? AND t >= ? AND seq <= ? ORDER BY t DESC LIMIT 1 OFFSET ?",
			id, lo(since), seq, perChannel-1).Scan(&ns)
		switch {
		case errors.Is(err, sql.ErrNoRows):
			out[name] = since
		case err != nil:
			return nil, fmt.Errorf("journal %s: replay start of %s: %w", j.path, name, err)
		default:
			if t := time.Unix(0, ns); t.After(out[name]) {
				out[name] = t
			}
		}
	}
	return out, nil
}

// Latest returns the newest committed reading of every channel, by channel name.
func (j *Journal) Latest() (map[string]daq.Reading, error) {
	q := "SELECT " + readingCols + " FROM channels c JOIN readings r ON r.seq = " +
		"(SELECT seq FROM readings WHERE channel_id = c.id ORDER BY t DESC, seq DESC LIMIT 1)"
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

// lo and hi turn an optional time bound into Unix nanoseconds.
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
