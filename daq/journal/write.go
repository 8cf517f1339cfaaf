package journal

import (
	"context"
	"database/sql"
	"errors"
	"math"

	"github.com/settle-lab/settle/daq"
)

// genMask takes the generation out of a reading's k (the low 32 bits; the duplicate
// ordinal is above them).
const genMask = 1<<32 - 1

// writes holds the statements that write readings within one transaction.
type writes struct {
	ins, insNew, newest, insRaw, rawLast, delRaw, find, set *sql.Stmt
}

func prepareWrites(ctx context.Context, tx *sql.Tx) (*writes, error) {
	w := &writes{}
	for _, p := range []struct {
		st **sql.Stmt
		q  string
	}{
		// k: the generation, and above it one more than the readings of the channel at
		// this time already hold (none: 0), so that k orders them as written.
		{&w.ins, "INSERT INTO readings (channel_id, t, k, v) VALUES (?1, ?2, ?3 +" +
			" (coalesce((SELECT (max(k) >> 32) + 1 FROM readings WHERE channel_id = ?1 AND t = ?2), 0) << 32), ?4)"},
		// A time after the channel's newest (the usual case) has no readings yet: k is
		// the generation.
		{&w.insNew, "INSERT INTO readings (channel_id, t, k, v) VALUES (?, ?, ?, ?)"},
		{&w.newest, "SELECT max(t) FROM readings WHERE channel_id = ?"},
		{&w.insRaw, "INSERT OR REPLACE INTO raw_texts (channel_id, t, k, raw) VALUES (?, ?, ?, ?)"},
		{&w.rawLast, "INSERT INTO raw_texts (channel_id, t, k, raw)" +
			" SELECT ?1, ?2, max(k), ?3 FROM readings WHERE channel_id = ?1 AND t = ?2"},
		{&w.delRaw, "DELETE FROM raw_texts WHERE channel_id = ? AND t = ? AND k = ?"},
		{&w.find, "SELECT k, v FROM readings WHERE channel_id = ? AND t = ?"},
		{&w.set, "UPDATE readings SET v = ? WHERE channel_id = ? AND t = ? AND k = ?"},
	} {
		st, err := tx.PrepareContext(ctx, p.q)
		if err != nil {
			w.close()
			return nil, err
		}
		*p.st = st
	}
	return w, nil
}

func (w *writes) close() {
	for _, st := range []*sql.Stmt{w.ins, w.insNew, w.newest, w.insRaw, w.rawLast, w.delRaw, w.find, w.set} {
		if st != nil {
			st.Close()
		}
	}
}

// insert adds one reading of channel id in generation gen. A second reading of the
// channel with the same time (a logger repeating a line) is kept too, after the first.
// newest caches each channel's newest time written (at least the newest in the file),
// so that a reading later than it, the usual case, is written without a lookup.
//
// The time is stored in ticks (see Tick): readings less than a tick apart share one.
func (w *writes) insert(ctx context.Context, newest map[int64]int64, id, gen int64, r daq.Reading) error {
	t := ticks(r.Time)
	last, ok := newest[id]
	if !ok {
		var v sql.NullInt64
		if err := w.newest.QueryRowContext(ctx, id).Scan(&v); err != nil {
			return err
		}
		last = v.Int64
		if !v.Valid {
			last = math.MinInt64
		}
	}
	st := w.ins
	if t > last {
		st = w.insNew
	}
	if _, err := st.ExecContext(ctx, id, t, gen, encodeValue(r.Celsius, r.Status)); err != nil {
		return err
	}
	newest[id] = max(last, t)
	if r.Raw == "" {
		return nil
	}
	_, err := w.rawLast.ExecContext(ctx, id, t, r.Raw) // the reading just written has the largest k
	return err
}

// restatus sets the status and raw text of every reading of channel id at r's time
// (its tick), keeping its value.
func (w *writes) restatus(ctx context.Context, id int64, r daq.Reading) error {
	t := ticks(r.Time)
	rows, err := w.find.QueryContext(ctx, id, t)
	if err != nil {
		return err
	}
	type row struct {
		k int64
		v any
	}
	var found []row
	for rows.Next() {
		var x row
		if err := rows.Scan(&x.k, &x.v); err != nil {
			rows.Close()
			return err
		}
		found = append(found, x)
	}
	if err := errors.Join(rows.Err(), rows.Close()); err != nil {
		return err
	}
	for _, x := range found {
		c, _, err := decodeValue(x.v)
		if err != nil {
			return err
		}
		if _, err := w.set.ExecContext(ctx, encodeValue(c, r.Status), id, t, x.k); err != nil {
			return err
		}
		if r.Raw == "" {
			_, err = w.delRaw.ExecContext(ctx, id, t, x.k)
		} else {
			_, err = w.insRaw.ExecContext(ctx, id, t, x.k, r.Raw)
		}
		if err != nil {
			return err
		}
	}
	return nil
}
