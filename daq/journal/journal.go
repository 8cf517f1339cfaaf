package journal

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"log/slog"
	"net/url"
	"os"
	"path/filepath"
	"sync"
	"time"

	_ "modernc.org/sqlite" // registers the "sqlite" driver

	"github.com/settle-lab/settle/daq"
)

// FileName is the journal's file name inside the data directory.
const FileName = "settle.db"

// ErrUnavailable is returned by queries and run operations while the journal file
// cannot be opened (for example a read-only data directory at start-up).
var ErrUnavailable = errors.New("journal: file not available")

// ErrClosed is returned by Flush after Close.
var ErrClosed = errors.New("journal: closed")

// ErrReadOnly is returned by writing operations on a journal opened read-only.
var ErrReadOnly = errors.New("journal: opened read-only")

// Options tunes a Journal. The zero value is ready to use; each field documents its
// default.
type Options struct {
	// CommitInterval is the time between commits. Zero means 1 s. A kill -9 loses at
	// most the readings appended during the last interval.
	CommitInterval time.Duration
	// BatchSize commits early once this many readings are queued, which keeps memory
	// flat at high rates. Zero means 8192.
	BatchSize int
	// QueueCap is the most readings held in memory while the disk cannot be written;
	// past it, new readings are dropped and counted. Zero means 1 << 20 (about 12 days
	// of one channel at 1 Hz, roughly 100 MB).
	QueueCap int
	// MaxBytes caps the size of the journal file; when reached, writes fail like on a
	// full disk. Zero means no cap. It is rounded down to whole pages.
	MaxBytes int64
	// ReadOnly opens an existing journal for reading only (reports, export); Append
	// and run operations then fail or drop. The writer goroutine does not run.
	ReadOnly bool
	// Logger receives the journal's log lines. Nil means slog.Default().
	Logger *slog.Logger
	// ForecastMinShift and ForecastRelShift decide when RecordForecast stores a new
	// point: on a state change, or when the predicted time or a bound moves by more
	// than max(ForecastMinShift, ForecastRelShift × time remaining to the prediction).
	// Zero means 30 s and 0.01.
	ForecastMinShift time.Duration
	// ForecastRelShift: see ForecastMinShift.
	ForecastRelShift float64
	// Retention prunes the readings of finished runs; the writer applies it at start
	// and then every PruneEvery. The zero value keeps everything.
	Retention Retention
	// PruneEvery is the time between retention passes. Zero means 1 h.
	PruneEvery time.Duration
}

func (o Options) withDefaults() Options {
	if o.CommitInterval <= 0 {
		o.CommitInterval = time.Second
	}
	if o.BatchSize <= 0 {
		o.BatchSize = 8192
	}
	if o.QueueCap <= 0 {
		o.QueueCap = 1 << 20
	}
	if o.Logger == nil {
		o.Logger = slog.Default()
	}
	if o.ForecastMinShift <= 0 {
		o.ForecastMinShift = 30 * time.Second
	}
	if o.ForecastRelShift <= 0 {
		o.ForecastRelShift = 0.01
	}
	if o.PruneEvery <= 0 {
		o.PruneEvery = time.Hour
	}
	return o
}

// Health is the journal's state for metrics and the API.
type Health struct {
	// Path is the journal file.
	Path string
	// Writable is true when the last commit (or open) succeeded.
	Writable bool
	// LastError is the last write error, empty after a successful commit.
	LastError string
	// Pending is the readings queued in memory, not yet committed.
	Pending int
	// Dropped counts readings dropped because the queue was full.
	Dropped uint64
	// Committed counts readings committed since Open.
	Committed uint64
	// LastCommit is the time of the last successful commit (zero before any).
	LastCommit time.Time
}

// Journal is the durable record of readings, runs and forecasts. It is safe for
// concurrent use.
type Journal struct {
	path string
	opt  Options
	log  *slog.Logger

	dbMu sync.RWMutex
	wdb  *sql.DB // one connection: every write goes through it
	rdb  *sql.DB // read-only pool

	mu       sync.Mutex
	queue    []daq.Reading
	spare    []daq.Reading
	inflight int
	fqueue   []forecastRow
	squeue   []daq.Reading // status changes of readings already appended
	lastFc   map[fcKey]forecastRow
	active   map[string]string // channel → active run id, for the writer
	health   Health
	failedAt time.Time // when the current failure was last logged

	flushMu sync.Mutex        // serialises Flush with the writer loop
	chanIDs map[chanKey]int64 // under flushMu
	gen     int64             // generation written into new readings (see LastSeq); under flushMu
	newest  map[int64]int64   // channel id → its newest time written, or later (see writes.insert); under flushMu
	wake    chan struct{}
	stop    chan struct{}
	done    chan struct{}
	closeMu sync.Once
	closeE  error
	closed  bool     // under mu: set by Close; later appends are dropped and counted
	lock    *os.File // the data directory's lock, held while writing (under flushMu)
}

type chanKey struct{ logger, name string }

// Open opens (creating and migrating as needed) the journal in dir and, unless
// opt.ReadOnly, starts its writer; Close stops it. A data directory that cannot be
// created or written is not an error: the journal logs it, keeps readings in memory and
// retries every commit interval (see Health); so is a file SQLite cannot open or
// migrate, which Health then reports. Open fails only on a schema newer than this
// package and, with ReadOnly, on a missing or unreadable file.
func Open(dir string, opt Options) (*Journal, error) {
	if dir == "" {
		return nil, errors.New("journal: no data directory given (config key data_dir, --data-dir or SETTLE_DATA_DIR)")
	}
	opt = opt.withDefaults()
	j := &Journal{
		path:    filepath.Join(dir, FileName),
		opt:     opt,
		log:     opt.Logger,
		lastFc:  map[fcKey]forecastRow{},
		active:  map[string]string{},
		chanIDs: map[chanKey]int64{},
		wake:    make(chan struct{}, 1),
		stop:    make(chan struct{}),
		done:    make(chan struct{}),
	}
	j.health.Path = j.path
	if opt.ReadOnly {
		close(j.done)
		return j, j.openReadOnly()
	}
	if err := j.openWriter(); err != nil {
		if errors.Is(err, ErrSchemaTooNew) || errors.Is(err, ErrLocked) {
			if j.lock != nil {
				j.lock.Close()
			}
			return nil, err
		}
		j.fail(err)
	}
	go j.run()
	return j, nil
}

// Path is the journal file.
func (j *Journal) Path() string { return j.path }

func dsn(path string, q url.Values) string {
	return (&url.URL{Scheme: "file", Opaque: path, RawQuery: q.Encode()}).String()
}

func (j *Journal) openReadOnly() error {
	if _, err := os.Stat(j.path); err != nil {
		return fmt.Errorf("journal: open %s read-only: %w", j.path, err)
	}
	db, err := sql.Open("sqlite", dsn(j.path, url.Values{
		"mode":    {"ro"},
		"_pragma": {"busy_timeout(5000)", "query_only(1)"},
	}))
	if err != nil {
		return fmt.Errorf("journal: open %s read-only: %w", j.path, err)
	}
	var v int
	if err := db.QueryRow("PRAGMA user_version").Scan(&v); err != nil {
		db.Close()
		return fmt.Errorf("journal: read %s: %w", j.path, err)
	}
	if v > SchemaVersion {
		db.Close()
		return fmt.Errorf("journal %s: version %d: %w", j.path, v, ErrSchemaTooNew)
	}
	if v < SchemaVersion {
		db.Close()
		return fmt.Errorf("journal %s: version %d, this settle reads version %d: start the daemon (settle run) once on this data directory to migrate it", j.path, v, SchemaVersion)
	}
	j.rdb = db
	return nil
}

// openWriter creates the directory and file, migrates the schema and opens both pools.
func (j *Journal) openWriter() error {
	if err := os.MkdirAll(filepath.Dir(j.path), 0o750); err != nil {
		return fmt.Errorf("journal: create data directory: %w", err)
	}
	if j.lock == nil {
		l, err := lockDir(filepath.Dir(j.path))
		if err != nil {
			return err
		}
		j.lock = l
	}
	pragmas := []string{"busy_timeout(5000)", "journal_mode(WAL)", "synchronous(FULL)", "foreign_keys(1)"}
	if j.opt.MaxBytes > 0 {
		pragmas = append(pragmas, fmt.Sprintf("max_page_count(%d)", max(j.opt.MaxBytes/4096, 1)))
	}
	w, err := sql.Open("sqlite", dsn(j.path, url.Values{"_pragma": pragmas, "_txlock": {"immediate"}}))
	if err != nil {
		return fmt.Errorf("journal: open %s: %w", j.path, err)
	}
	w.SetMaxOpenConns(1)
	w.SetConnMaxIdleTime(0)
	start := time.Now()
	from, err := migrate(context.Background(), w, j.path)
	if err != nil {
		w.Close()
		return err
	}
	if from > 0 && from < SchemaVersion {
		j.log.Info("journal migrated", "path", j.path, "from_version", from, "to_version", SchemaVersion, "took", time.Since(start).Round(time.Millisecond))
	}
	r, err := sql.Open("sqlite", dsn(j.path, url.Values{"mode": {"ro"}, "_pragma": {"busy_timeout(5000)"}}))
	if err != nil {
		w.Close()
		return fmt.Errorf("journal: open %s for reading: %w", j.path, err)
	}
	r.SetMaxOpenConns(4)
	j.newest = map[int64]int64{}
	if err := w.QueryRow("SELECT coalesce(max(gen), 0) FROM marks").Scan(&j.gen); err != nil {
		w.Close()
		r.Close()
		return fmt.Errorf("journal: read %s: %w", j.path, err)
	}
	j.dbMu.Lock()
	j.wdb, j.rdb = w, r
	j.dbMu.Unlock()
	return j.loadActive()
}

func (j *Journal) writer() *sql.DB {
	j.dbMu.RLock()
	defer j.dbMu.RUnlock()
	return j.wdb
}

func (j *Journal) reader() (*sql.DB, error) {
	j.dbMu.RLock()
	defer j.dbMu.RUnlock()
	if j.rdb == nil {
		return nil, fmt.Errorf("%w: %s", ErrUnavailable, j.path)
	}
	return j.rdb, nil
}

// Append queues r for the next commit. It never blocks on the disk: when the queue
// holds Options.QueueCap readings, r is dropped and counted in Health.Dropped.
func (j *Journal) Append(r daq.Reading) {
	j.mu.Lock()
	if j.opt.ReadOnly || j.closed || len(j.queue)+j.inflight >= j.opt.QueueCap {
		j.health.Dropped++
		j.mu.Unlock()
		return
	}
	j.queue = append(j.queue, r)
	full := len(j.queue) >= j.opt.BatchSize
	j.mu.Unlock()
	if full {
		select {
		case j.wake <- struct{}{}:
		default:
		}
	}
}

// Restatus queues a change of status for a reading already appended (same logger,
// channel and time): the cleaner judges a spike or a stuck value a few readings after
// the reading was journaled. It is committed with the next batch, after the readings.
func (j *Journal) Restatus(r daq.Reading) {
	j.mu.Lock()
	defer j.mu.Unlock()
	if j.opt.ReadOnly || j.closed {
		return
	}
	j.squeue = append(j.squeue, r)
}

// Health returns the journal's current state.
func (j *Journal) Health() Health {
	j.mu.Lock()
	defer j.mu.Unlock()
	h := j.health
	h.Pending = len(j.queue) + j.inflight
	return h
}

// Flush commits everything queued now and returns the commit's error, if any.
func (j *Journal) Flush() error {
	if j.opt.ReadOnly {
		return ErrReadOnly
	}
	j.mu.Lock()
	closed := j.closed
	j.mu.Unlock()
	if closed {
		return ErrClosed
	}
	return j.flush()
}

// Close commits what is queued, stops the writer and closes the file. It returns the
// last commit's error: readings still pending then are lost.
func (j *Journal) Close() error {
	j.closeMu.Do(func() {
		j.mu.Lock()
		j.closed = true // from here Append drops and counts; the writer's last flush runs
		j.mu.Unlock()
		if !j.opt.ReadOnly {
			close(j.stop)
			<-j.done
			j.mu.Lock()
			if h := j.health; !h.Writable && len(j.queue) > 0 {
				j.closeE = fmt.Errorf("journal %s: closed with %d readings not written: %s", j.path, len(j.queue), h.LastError)
			}
			j.mu.Unlock()
		}
		j.dbMu.Lock()
		defer j.dbMu.Unlock()
		// The reader first: the last connection to close folds the write-ahead log into
		// the database, and only the writer can.
		for _, db := range []*sql.DB{j.rdb, j.wdb} {
			if db != nil {
				if err := db.Close(); err != nil && j.closeE == nil {
					j.closeE = fmt.Errorf("journal %s: close: %w", j.path, err)
				}
			}
		}
		j.wdb, j.rdb = nil, nil
		if j.lock != nil {
			j.lock.Close() // releases the flock
		}
	})
	return j.closeE
}

// run is the writer loop: a commit every interval, or sooner when a batch is full.
func (j *Journal) run() {
	defer close(j.done)
	tick := time.NewTicker(j.opt.CommitInterval)
	defer tick.Stop()
	prune := time.NewTicker(j.opt.PruneEvery)
	defer prune.Stop()
	j.prune()
	for {
		select {
		case <-j.stop:
			j.flush()
			return
		case <-prune.C:
			j.prune()
		case <-tick.C:
		case <-j.wake:
		}
		j.flush()
	}
}

// prune applies Options.Retention and logs what it did.
func (j *Journal) prune() {
	if j.opt.Retention.Age <= 0 || j.writer() == nil {
		return
	}
	st, err := j.Prune(time.Now(), j.opt.Retention)
	if err != nil {
		j.log.Warn("journal retention failed", "path", j.path, "err", err)
		return
	}
	if st.Runs > 0 {
		j.log.Info("journal retention", "path", j.path, "runs", st.Runs, "readings_deleted", st.Deleted)
	}
}

// flush commits the queue. On failure the batch goes back to the head of the queue.
func (j *Journal) flush() error {
	j.flushMu.Lock()
	defer j.flushMu.Unlock()
	if j.writer() == nil {
		if err := j.openWriter(); err != nil {
			j.fail(err)
			return err
		}
	}
	for {
		batch, fcs, sts, all, reuse := j.take()
		err := j.commit(batch, fcs, sts)
		j.mu.Lock()
		j.inflight = 0
		if err != nil {
			j.queue = append(batch, j.queue...)
			j.fqueue = append(fcs, j.fqueue...)
			j.squeue = append(sts, j.squeue...)
		} else if reuse {
			j.spare = batch[:0]
		}
		more := !all && len(j.queue) > 0 || len(j.queue) >= j.opt.BatchSize
		j.mu.Unlock()
		if err != nil {
			j.fail(err)
			return err
		}
		j.ok(len(batch))
		if !more {
			return nil
		}
	}
}

// take removes the next batch from the queue: all of it (all true), swapped with the
// spare buffer (reuse true unless it grew large), or, after an outage, the first
// maxCommit readings so that one transaction stays short.
func (j *Journal) take() (batch []daq.Reading, fcs []forecastRow, sts []daq.Reading, all, reuse bool) {
	j.mu.Lock()
	defer j.mu.Unlock()
	limit := max(maxCommit, j.opt.BatchSize)
	fcs, j.fqueue = j.fqueue, nil
	if len(j.queue) > limit {
		batch, j.queue = j.queue[:limit:limit], j.queue[limit:]
		j.inflight = len(batch)
		return batch, fcs, nil, false, false
	}
	sts, j.squeue = j.squeue, nil
	batch, reuse = j.queue, cap(j.queue) <= 4*limit
	if !reuse {
		j.spare = nil // let a buffer grown during an outage go
	}
	j.queue, j.spare = j.spare[:0], nil
	j.inflight = len(batch)
	return batch, fcs, sts, true, reuse
}

// maxCommit is the most readings written in one transaction (unless BatchSize is
// larger). A variable so that tests can lower it.
var maxCommit = 65536

// fail records a write error, logging it on the first failure and then once a minute.
func (j *Journal) fail(err error) {
	j.mu.Lock()
	defer j.mu.Unlock()
	now := time.Now()
	if j.health.Writable || j.failedAt.IsZero() || now.Sub(j.failedAt) >= time.Minute {
		j.log.Error("journal not writable; keeping readings in memory and retrying",
			"path", j.path, "pending", len(j.queue), "dropped", j.health.Dropped, "err", err)
		j.failedAt = now
	}
	j.health.Writable = false
	j.health.LastError = err.Error()
}

// ok records a successful commit of n readings.
func (j *Journal) ok(n int) {
	j.mu.Lock()
	defer j.mu.Unlock()
	if !j.health.Writable && !j.failedAt.IsZero() {
		j.log.Info("journal writable again", "path", j.path, "written", n, "pending", len(j.queue))
	}
	j.failedAt = time.Time{}
	j.health.Writable, j.health.LastError = true, ""
	j.health.Committed += uint64(n)
	j.health.LastCommit = time.Now()
}

// commit writes one batch of readings and forecast points in one transaction.
func (j *Journal) commit(batch []daq.Reading, fcs []forecastRow, sts []daq.Reading) error {
	if len(batch) == 0 && len(fcs) == 0 && len(sts) == 0 {
		return nil
	}
	db := j.writer()
	if db == nil {
		return fmt.Errorf("%w: %s", ErrUnavailable, j.path)
	}
	ctx := context.Background()
	tx, err := db.BeginTx(ctx, nil)
	if err != nil {
		return fmt.Errorf("journal %s: begin: %w", j.path, err)
	}
	defer tx.Rollback()
	added := map[chanKey]int64{}
	if err := j.writeReadings(ctx, tx, batch, sts, added); err != nil {
		return err
	}
	if err := insertForecasts(ctx, tx, fcs); err != nil {
		return fmt.Errorf("journal %s: write forecasts: %w", j.path, err)
	}
	if err := tx.Commit(); err != nil {
		return fmt.Errorf("journal %s: commit: %w", j.path, err)
	}
	for k, id := range added {
		j.chanIDs[k] = id
	}
	return nil
}

// writeReadings inserts batch and applies the Restatus changes sts (status and raw
// text, the value kept; a reading not in the journal, dropped while the disk was full,
// is skipped), with the write statements prepared once for the transaction. New
// channels' ids go to added.
func (j *Journal) writeReadings(ctx context.Context, tx *sql.Tx, batch, sts []daq.Reading, added map[chanKey]int64) error {
	if len(batch) == 0 && len(sts) == 0 {
		return nil
	}
	w, err := prepareWrites(ctx, tx)
	if err != nil {
		return fmt.Errorf("journal %s: prepare writes: %w", j.path, err)
	}
	defer w.close()
	if err := j.eachReading(ctx, tx, batch, added, "insert reading", func(id int64, r daq.Reading) error {
		return w.insert(ctx, j.newest, id, j.gen, r)
	}); err != nil {
		return err
	}
	return j.eachReading(ctx, tx, sts, added, "update status", func(id int64, r daq.Reading) error {
		return w.restatus(ctx, id, r)
	})
}

// eachReading applies op to each reading of batch with its channel's row id; each
// names one reading's write in errors.
func (j *Journal) eachReading(ctx context.Context, tx *sql.Tx, batch []daq.Reading, added map[chanKey]int64,
	each string, op func(id int64, r daq.Reading) error) error {
	for _, r := range batch {
		id, err := j.channelID(ctx, tx, chanKey{r.Logger, r.Channel}, added)
		if err != nil {
			return err
		}
		if err := op(id, r); err != nil {
			return fmt.Errorf("journal %s: %s of %s: %w", j.path, each, r.Channel, err)
		}
	}
	return nil
}

// channelID returns the row id of a channel, inserting it when new. New ids go to
// added and reach the cache only when the transaction commits.
func (j *Journal) channelID(ctx context.Context, tx *sql.Tx, k chanKey, added map[chanKey]int64) (int64, error) {
	if id, ok := j.chanIDs[k]; ok {
		return id, nil
	}
	if id, ok := added[k]; ok {
		return id, nil
	}
	if _, err := tx.ExecContext(ctx, "INSERT OR IGNORE INTO channels (logger, name) VALUES (?, ?)", k.logger, k.name); err != nil {
		return 0, fmt.Errorf("journal %s: add channel %s: %w", j.path, k.name, err)
	}
	var id int64
	if err := tx.QueryRowContext(ctx, "SELECT id FROM channels WHERE logger = ? AND name = ?", k.logger, k.name).Scan(&id); err != nil {
		return 0, fmt.Errorf("journal %s: find channel %s: %w", j.path, k.name, err)
	}
	added[k] = id
	return id, nil
}
