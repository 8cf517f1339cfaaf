// Package journal keeps the durable record: every reading with its status, the runs
// that bind a channel to a specimen, each run's forecast history and the observed target
// crossings, in one SQLite file (modernc.org/sqlite, pure Go) in the data directory.
//
// Writing never blocks acquisition. Append puts a reading in a memory queue; a writer
// goroutine commits the queue in one transaction every commit interval (default 1 s),
// or sooner when a batch fills. The file is in WAL mode with synchronous=FULL, so a
// commit is on disk when it returns: a kill -9 or a power cut loses at most the readings
// of the commit interval in progress, never a committed one, and never corrupts the file.
// FULL costs one fsync per commit, i.e. one a second at the default interval, which
// batching makes negligible (the throughput benchmark runs with it).
//
// When the disk is full or the data directory is read-only, the writer logs once, keeps
// readings in memory (up to Options.QueueCap, then counts drops), reports the state
// through Health, and retries every commit interval; writing resumes when the disk
// recovers.
//
// A reading takes about 21 bytes on disk (schema version 5, see schema.go and
// migrate_v5.go): one b-tree keyed by channel, time and a small generation number
// serves every query, the time is in ticks of 100 µs (Tick: 6 bytes, where nanoseconds
// took 8), the value and status share one column (a logger's decimal figure as a small
// integer when that decodes to the same float64 bit for bit, else the exact 8 bytes),
// and fault texts sit apart. A reading written at time t comes back at Truncate(t);
// queries compare their bounds with that time. Opening an older journal migrates it,
// every reading kept.
//
// Readers (Readings, Latest, Replay, Runs) use a separate read-only connection pool, so
// a report can read a journal while the daemon writes it; another process may open the
// same file with Options.ReadOnly.
//
// The package knows nothing of models or HTTP: forecast states are plain strings and
// targets are stored as the JSON text the caller gives.
package journal
