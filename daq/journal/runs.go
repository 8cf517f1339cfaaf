package journal

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"
)

// ErrRunActive is returned by StartRun when the channel already has an active run.
var ErrRunActive = errors.New("journal: channel already has an active run")

// ErrNoRun is returned when a run id or an active run does not exist.
var ErrNoRun = errors.New("journal: no such run")

// ErrStopped is returned by StopRun for a run that has stopped already.
var ErrStopped = errors.New("journal: run stopped already")

// ErrInvalid wraps the errors of a run spec or stop time that can never succeed.
var ErrInvalid = errors.New("journal: invalid run request")

// RunSpec describes a run to start.
type RunSpec struct {
	// ID names the run; empty means one made of the start time and the channel.
	ID string `json:"id,omitempty"`
	// Channel is the channel the specimen's thermocouple is on (required).
	Channel string `json:"channel"`
	// Specimen identifies the specimen (required), e.g. a lab sample number.
	Specimen string `json:"specimen"`
	// Description is free text.
	Description string `json:"description,omitempty"`
	// SpecimenSpec is the specimen description the models use (shape, size,
	// material), as YAML or JSON text; stored as given.
	SpecimenSpec string `json:"specimen_spec,omitempty"`
	// Targets is the run's targets as a JSON array; stored as given.
	Targets json.RawMessage `json:"targets,omitempty"`
	// Origin says who started the run: "config", "cli", "api" or "auto".
	Origin string `json:"origin,omitempty"`
	// Start is the run's start; zero means now.
	Start time.Time `json:"start,omitzero"`
}

// Run is a span of time during which a channel measures one specimen.
type Run struct {
	// ID names the run (see RunSpec.ID).
	ID string `json:"id"`
	// Channel, Specimen, Description, SpecimenSpec, Targets and Origin are as in the
	// RunSpec that started the run.
	Channel      string          `json:"channel"`
	Specimen     string          `json:"specimen"`
	Description  string          `json:"description,omitempty"`
	SpecimenSpec string          `json:"specimen_spec,omitempty"`
	Targets      json.RawMessage `json:"targets,omitempty"`
	Origin       string          `json:"origin,omitempty"`
	// Started is the run's start.
	Started time.Time `json:"started"`
	// Stopped is zero while the run is active.
	Stopped time.Time `json:"stopped,omitzero"`
	// Summary is computed when the run stops and kept after retention thins the
	// readings; nil while active.
	Summary *Summary `json:"summary,omitempty"`
	// Pruned is "", "thinned" or "dropped": what retention did to the raw readings.
	Pruned string `json:"pruned,omitempty"`
}

// Active reports whether the run has not stopped.
func (r Run) Active() bool { return r.Stopped.IsZero() }

// Summary condenses a run's readings.
type Summary struct {
	// Readings counts the run's readings; Faults those with a fault status.
	Readings int64 `json:"readings"`
	Faults   int64 `json:"faults"`
	// First and Last are the times of the first and last reading.
	First time.Time `json:"first,omitzero"`
	Last  time.Time `json:"last,omitzero"`
	// The temperatures (°C) are of OK readings only; null without any.
	FirstCelsius *float64 `json:"first_celsius"`
	LastCelsius  *float64 `json:"last_celsius"`
	MinCelsius   *float64 `json:"min_celsius"`
	MaxCelsius   *float64 `json:"max_celsius"`
}

// RunFilter selects runs; zero fields do not filter.
type RunFilter struct {
	// Channel keeps the runs of one channel.
	Channel string
	// ActiveOnly keeps runs that have not stopped.
	ActiveOnly bool
	// From and To keep runs overlapping [From, To).
	From, To time.Time
	// Limit caps the number of runs, newest first. Zero means 1000.
	Limit int
}

const runCols = "id, channel, specimen, description, specimen_spec, targets, origin, started, stopped, summary, pruned"

func scanRun(row interface{ Scan(...any) error }) (Run, error) {
	var (
		r        Run
		targets  string
		started  int64
		stopped  sql.NullInt64
		summary  string
		specText string
	)
	err := row.Scan(&r.ID, &r.Channel, &r.Specimen, &r.Description, &specText, &targets, &r.Origin, &started, &stopped, &summary, &r.Pruned)
	if err != nil {
		return r, err
	}
	r.SpecimenSpec = specText
	if targets != "" {
		r.Targets = json.RawMessage(targets)
	}
	r.Started, r.Stopped = time.Unix(0, started), nsTime(stopped)
	if summary != "" {
		r.Summary = new(Summary)
		if err := json.Unmarshal([]byte(summary), r.Summary); err != nil {
			return r, fmt.Errorf("run %s summary: %w", r.ID, err)
		}
	}
	return r, nil
}

// StartRun starts a run. It fails with ErrRunActive when the channel has one. A start
// at or before the channel's last stop (an auto-detected placement is found a little
// after it happened) is moved just after that stop: runs on one channel never overlap, so retention of
// the earlier run cannot take readings of this one.
func (j *Journal) StartRun(spec RunSpec) (Run, error) {
	if err := checkSpec(&spec); err != nil {
		return Run{}, err
	}
	db, err := j.writeDB()
	if err != nil {
		return Run{}, err
	}
	ctx := context.Background()
	tx, err := db.BeginTx(ctx, nil)
	if err != nil {
		return Run{}, fmt.Errorf("journal %s: start run: %w", j.path, err)
	}
	defer tx.Rollback()
	var active string
	switch err := tx.QueryRowContext(ctx, "SELECT id FROM runs WHERE channel = ? AND stopped IS NULL", spec.Channel).Scan(&active); {
	case err == nil:
		return Run{}, fmt.Errorf("start run on %s: run %s is active: %w", spec.Channel, active, ErrRunActive)
	case !errors.Is(err, sql.ErrNoRows):
		return Run{}, fmt.Errorf("journal %s: start run: %w", j.path, err)
	}
	if err := clampStart(ctx, tx, &spec); err != nil {
		return Run{}, fmt.Errorf("journal %s: start run: %w", j.path, err)
	}
	id, err := freeID(ctx, tx, spec)
	if err != nil {
		return Run{}, fmt.Errorf("journal %s: start run: %w", j.path, err)
	}
	_, err = tx.ExecContext(ctx, "INSERT INTO runs (id, channel, specimen, description, specimen_spec, targets, origin, started) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
		id, spec.Channel, spec.Specimen, spec.Description, spec.SpecimenSpec, string(spec.Targets), spec.Origin, spec.Start.UnixNano())
	if err != nil {
		return Run{}, fmt.Errorf("journal %s: start run %s: %w", j.path, id, err)
	}
	if err := tx.Commit(); err != nil {
		return Run{}, fmt.Errorf("journal %s: start run %s: %w", j.path, id, err)
	}
	j.setActive(spec.Channel, id)
	return j.Run(id)
}

// ActiveRunID returns the id of channel's active run from memory, without touching
// the disk, so the daemon may call it for every reading or forecast. On a read-only
// journal it queries the file.
func (j *Journal) ActiveRunID(channel string) (string, bool) {
	if j.opt.ReadOnly {
		r, err := j.ActiveRun(channel)
		return r.ID, err == nil
	}
	j.mu.Lock()
	defer j.mu.Unlock()
	id, ok := j.active[channel]
	return id, ok
}

func (j *Journal) setActive(channel, id string) {
	j.mu.Lock()
	defer j.mu.Unlock()
	if id == "" {
		delete(j.active, channel)
		return
	}
	j.active[channel] = id
}

// loadActive fills the active-run cache from the file.
func (j *Journal) loadActive() error {
	runs, err := j.Runs(RunFilter{ActiveOnly: true, Limit: 1 << 20})
	if err != nil {
		return err
	}
	j.mu.Lock()
	defer j.mu.Unlock()
	clear(j.active)
	for _, r := range runs {
		j.active[r.Channel] = r.ID
	}
	return nil
}

// MaxSpecimenBytes caps a run's specimen id: room for a sample number or a short name
// (and a UTF-8 one), small enough that logs, figures and the status page show it whole.
const MaxSpecimenBytes = 128

func checkSpec(spec *RunSpec) error {
	switch {
	case strings.TrimSpace(spec.Channel) == "":
		return fmt.Errorf("start run: channel is empty: %w", ErrInvalid)
	case strings.TrimSpace(spec.Specimen) == "":
		return fmt.Errorf("start run: specimen is empty: %w", ErrInvalid)
	case len(spec.Specimen) > MaxSpecimenBytes:
		return fmt.Errorf("start run: specimen %s is %d bytes, over the limit of %d: %w", clip(spec.Specimen), len(spec.Specimen), MaxSpecimenBytes, ErrInvalid)
	case spec.ID != "" && (slug(spec.ID) != spec.ID || len(spec.ID) > 128):
		return fmt.Errorf("start run: id %s: use at most 128 letters, digits, '-', '_' and '.': %w", clip(spec.ID), ErrInvalid)
	case len(spec.Targets) > 0 && !json.Valid(spec.Targets):
		return fmt.Errorf("start run on %s: targets are not valid JSON: %w", clip(spec.Channel), ErrInvalid)
	}
	if spec.Start.IsZero() {
		spec.Start = time.Now()
	}
	return nil
}

// freeID returns spec.ID, or a new id "20060102T150405Z-channel" with a suffix when
// taken.
func freeID(ctx context.Context, tx *sql.Tx, spec RunSpec) (string, error) {
	base := spec.ID
	if base == "" {
		base = spec.Start.UTC().Format("20060102T150405Z") + "-" + slug(spec.Channel)
	}
	for i := 1; i < 1000; i++ {
		id := base
		if i > 1 {
			id = fmt.Sprintf("%s-%d", base, i)
		}
		var n int
		if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM runs WHERE id = ?", id).Scan(&n); err != nil {
			return "", err
		}
		if n == 0 {
			return id, nil
		}
		if spec.ID != "" {
			return "", fmt.Errorf("run id %q is taken: %w", id, ErrInvalid)
		}
	}
	return "", fmt.Errorf("no free run id for %q", base)
}

// slug keeps letters, digits, '-', '_' and '.', replacing anything else with '_'.
func slug(s string) string {
	return strings.Map(func(r rune) rune {
		if r == '-' || r == '_' || r == '.' || r >= '0' && r <= '9' || r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' {
			return r
		}
		return '_'
	}, s)
}

// StopRun stops the run id at the time at (zero: now), commits the readings queued so
// far and stores the run's summary.
func (j *Journal) StopRun(id string, at time.Time) (Run, error) {
	if at.IsZero() {
		at = time.Now()
	}
	run, err := j.Run(id)
	if err != nil {
		return Run{}, err
	}
	if !run.Active() {
		return run, fmt.Errorf("stop run %s: stopped at %s: %w", id, run.Stopped.Format(time.RFC3339), ErrStopped)
	}
	if at.Before(run.Started) {
		return Run{}, fmt.Errorf("stop run %s: stop time %s is before its start: %w", id, at.Format(time.RFC3339), ErrInvalid)
	}
	_ = j.flush() // include what is queued; a failure is already in Health
	run.Stopped = at
	sum, err := j.summarize(run)
	if err != nil {
		return Run{}, err
	}
	if err := j.saveStop(run, sum); err != nil {
		return Run{}, err
	}
	j.setActive(run.Channel, "")
	j.forgetForecasts(id)
	return j.Run(id)
}

func (j *Journal) saveStop(run Run, sum Summary) error {
	db, err := j.writeDB()
	if err != nil {
		return err
	}
	b, err := json.Marshal(sum)
	if err != nil {
		return fmt.Errorf("stop run %s: %w", run.ID, err)
	}
	_, err = db.Exec("UPDATE runs SET stopped = ?, summary = ? WHERE id = ? AND stopped IS NULL", run.Stopped.UnixNano(), string(b), run.ID)
	if err != nil {
		return fmt.Errorf("journal %s: stop run %s: %w", j.path, run.ID, err)
	}
	return nil
}

// summarize condenses the readings of run between its start and stop.
func (j *Journal) summarize(run Run) (Summary, error) {
	var s Summary
	for r, err := range j.Readings(run.Channel, run.Started, run.Stopped.Add(1)) {
		if err != nil {
			return s, fmt.Errorf("summarize run %s: %w", run.ID, err)
		}
		s.add(r.Time, r.Celsius, r.OK())
	}
	return s, nil
}

func (s *Summary) add(t time.Time, c float64, ok bool) {
	s.Readings++
	if s.First.IsZero() {
		s.First = t
	}
	s.Last = t
	if !ok {
		s.Faults++
		return
	}
	v := c
	if s.FirstCelsius == nil {
		s.FirstCelsius, s.MinCelsius, s.MaxCelsius = &v, ptr(v), ptr(v)
	}
	s.LastCelsius = ptr(v)
	*s.MinCelsius = math.Min(*s.MinCelsius, v)
	*s.MaxCelsius = math.Max(*s.MaxCelsius, v)
}

func ptr(v float64) *float64 { return &v }

// Run returns the run id, or an error wrapping ErrNoRun.
func (j *Journal) Run(id string) (Run, error) {
	db, err := j.reader()
	if err != nil {
		return Run{}, err
	}
	r, err := scanRun(db.QueryRow("SELECT "+runCols+" FROM runs WHERE id = ?", id))
	if errors.Is(err, sql.ErrNoRows) {
		return Run{}, fmt.Errorf("run %q: %w", id, ErrNoRun)
	}
	if err != nil {
		return Run{}, fmt.Errorf("journal %s: run %s: %w", j.path, id, err)
	}
	return r, nil
}

// ActiveRun returns the active run of channel, or an error wrapping ErrNoRun.
func (j *Journal) ActiveRun(channel string) (Run, error) {
	runs, err := j.Runs(RunFilter{Channel: channel, ActiveOnly: true, Limit: 1})
	if err != nil {
		return Run{}, err
	}
	if len(runs) == 0 {
		return Run{}, fmt.Errorf("no active run on channel %s: %w", channel, ErrNoRun)
	}
	return runs[0], nil
}

// Runs returns the runs matching f, newest first.
func (j *Journal) Runs(f RunFilter) ([]Run, error) {
	db, err := j.reader()
	if err != nil {
		return nil, err
	}
	q := "SELECT " + runCols + " FROM runs WHERE started < ? AND (stopped IS NULL OR stopped >= ?)"
	args := []any{hi(f.To), lo(f.From)}
	if f.Channel != "" {
		q += " AND channel = ?"
		args = append(args, f.Channel)
	}
	if f.ActiveOnly {
		q += " AND stopped IS NULL"
	}
	if f.Limit <= 0 {
		f.Limit = 1000
	}
	q += " ORDER BY started DESC, id LIMIT ?"
	args = append(args, f.Limit)
	rows, err := db.Query(q, args...)
	if err != nil {
		return nil, fmt.Errorf("journal %s: list runs: %w", j.path, err)
	}
	defer rows.Close()
	var out []Run
	for rows.Next() {
		r, err := scanRun(rows)
		if err != nil {
			return nil, fmt.Errorf("journal %s: list runs: %w", j.path, err)
		}
		out = append(out, r)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("journal %s: list runs: %w", j.path, err)
	}
	return out, nil
}

// writeDB returns the write pool, or an error when the journal is read-only or not
// open.
func (j *Journal) writeDB() (*sql.DB, error) {
	if j.opt.ReadOnly {
		return nil, fmt.Errorf("%w: %s", ErrReadOnly, j.path)
	}
	db := j.writer()
	if db == nil {
		return nil, fmt.Errorf("%w: %s", ErrUnavailable, j.path)
	}
	return db, nil
}

// clampStart moves spec.Start to just after the channel's latest stop when it lies at or
// before it (a stop is inclusive, so the reading at that instant stays the earlier run's).
func clampStart(ctx context.Context, tx *sql.Tx, spec *RunSpec) error {
	var last sql.NullInt64
	err := tx.QueryRowContext(ctx, "SELECT MAX(stopped) FROM runs WHERE channel = ?", spec.Channel).Scan(&last)
	if err != nil {
		return err
	}
	if last.Valid && spec.Start.UnixNano() <= last.Int64 {
		spec.Start = time.Unix(0, last.Int64+1).UTC()
	}
	return nil
}

// clip quotes s for an error message, its first 40 bytes and an ellipsis when longer,
// so a hostile value is never echoed or logged whole.
func clip(s string) string {
	if len(s) <= 40 {
		return strconv.Quote(s)
	}
	cut := 40
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return strconv.Quote(s[:cut]) + "…"
}
