package journal

import (
	"context"
	"database/sql"
	"fmt"
	"time"
)

// Ack is a technician's acknowledgement that a ready specimen was seen.
type Ack struct {
	// Channel is the specimen's position.
	Channel string `json:"channel"`
	// Segment is the start of the fitted segment (the specimen on that position).
	Segment time.Time `json:"segment_start"`
	// At is when it was acknowledged.
	At time.Time `json:"at"`
	// By is who acknowledged it, as they typed it (may be empty).
	By string `json:"by,omitempty"`
	// RunID is the channel's run at the time, if any.
	RunID string `json:"run_id,omitempty"`
}

// Acknowledge stores a; a second acknowledgement of the same specimen keeps the first.
// It writes at once (acknowledgements are rare and a person waits for the answer).
// The segment start, a reading's time, is stored truncated to a Tick as the reading's
// time is, so that it matches the segment a restart replays.
func (j *Journal) Acknowledge(a Ack) error {
	db, err := j.writeDB()
	if err != nil {
		return err
	}
	_, err = db.ExecContext(context.Background(),
		"INSERT OR IGNORE INTO acknowledgements (channel, segment, at, by, run_id) VALUES (?, ?, ?, ?, ?)",
		a.Channel, Truncate(a.Segment).UnixNano(), a.At.UnixNano(), a.By, a.RunID)
	if err != nil {
		return fmt.Errorf("journal %s: acknowledge %s: %w", j.path, a.Channel, err)
	}
	return nil
}

// Acknowledgements returns the acknowledgements made at or after since, oldest first.
func (j *Journal) Acknowledgements(since time.Time) ([]Ack, error) {
	db, err := j.reader()
	if err != nil {
		return nil, err
	}
	rows, err := db.QueryContext(context.Background(),
		"SELECT channel, segment, at, by, run_id FROM acknowledgements WHERE at >= ? ORDER BY at", since.UnixNano())
	if err != nil {
		return nil, fmt.Errorf("journal %s: read acknowledgements: %w", j.path, err)
	}
	return scanAcks(j.path, rows)
}

func scanAcks(path string, rows *sql.Rows) ([]Ack, error) {
	defer rows.Close()
	out := []Ack{}
	for rows.Next() {
		var a Ack
		var seg, at int64
		if err := rows.Scan(&a.Channel, &seg, &at, &a.By, &a.RunID); err != nil {
			return nil, fmt.Errorf("journal %s: read acknowledgements: %w", path, err)
		}
		a.Segment, a.At = time.Unix(0, seg).UTC(), time.Unix(0, at).UTC()
		out = append(out, a)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("journal %s: read acknowledgements: %w", path, err)
	}
	return out, nil
}

// RunAcknowledgements returns the acknowledgements made while run runID was active,
// oldest first.
func (j *Journal) RunAcknowledgements(runID string) ([]Ack, error) {
	db, err := j.reader()
	if err != nil {
		return nil, err
	}
	rows, err := db.QueryContext(context.Background(),
		"SELECT channel, segment, at, by, run_id FROM acknowledgements WHERE run_id = ? ORDER BY at", runID)
	if err != nil {
		return nil, fmt.Errorf("journal %s: read acknowledgements of %s: %w", j.path, runID, err)
	}
	return scanAcks(j.path, rows)
}
