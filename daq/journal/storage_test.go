package journal

import (
	"database/sql"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// storageLoad is the storage benchmark's load: channels at 1 Hz for seconds, each
// reading a two-decimal figure (as a logger prints it) at the host's receive time in
// nanoseconds, all channels' readings of one second committed together (the daemon
// commits once a second). SETTLE_STORAGE_CHANNELS and SETTLE_STORAGE_SECONDS change it.
func storageLoad(b *testing.B) (channels, seconds int) {
	channels, seconds = 100, 3600
	for _, v := range []struct {
		env string
		n   *int
	}{{"SETTLE_STORAGE_CHANNELS", &channels}, {"SETTLE_STORAGE_SECONDS", &seconds}} {
		if s := os.Getenv(v.env); s != "" {
			n, err := strconv.Atoi(s)
			if err != nil || n < 1 {
				b.Fatalf("%s=%q: want a positive count", v.env, s)
			}
			*v.n = n
		}
	}
	return channels, seconds
}

// storageReadings calls fn with each second's readings of the load, and half once
// the first half of the seconds is done.
func storageReadings(channels, seconds int, fn func([]daq.Reading), half func()) {
	rng := rand.New(rand.NewPCG(1, 2))
	batch := make([]daq.Reading, channels)
	for s := range seconds {
		for c := range batch {
			v, _ := strconv.ParseFloat(strconv.FormatFloat(20+280*rng.Float64(), 'f', 2, 64), 64)
			batch[c] = daq.Reading{Logger: fmt.Sprintf("rack-%d", c/8), Channel: fmt.Sprintf("s%d", c),
				Time:    t0.Add(time.Duration(s)*time.Second + time.Duration(rng.Int64N(int64(time.Second)))),
				Celsius: v, Status: daq.StatusOK}
		}
		fn(batch)
		if s == seconds/2-1 {
			half()
		}
	}
}

// BenchmarkStoragePerReading measures the journal's bytes per reading under
// storageLoad, for this package's schema (v5, times in ticks of 100 µs) and, side by
// side, for schema versions 4 (nanoseconds) and 3 (their statements and inserts, one
// transaction a second): the file after the last commit
// and a checkpoint (bytes/reading), and the growth over the second half of the load
// (growth-bytes/reading, and from it MB/channel-day at 1 Hz): a day's record grows at
// that rate, while a short load also counts each channel's last, part-filled pages.
// Run it once: go test ./daq/journal -run X -bench StoragePerReading -benchtime 1x
func BenchmarkStoragePerReading(b *testing.B) {
	channels, seconds := storageLoad(b)
	b.Run("v5", func(b *testing.B) {
		for range b.N {
			dir := b.TempDir()
			j, err := Open(dir, Options{Logger: quiet, CommitInterval: time.Hour})
			if err != nil {
				b.Fatal(err)
			}
			var mid int64
			storageReadings(channels, seconds, func(rs []daq.Reading) {
				for _, r := range rs {
					j.Append(r)
				}
				mustFlush(b, j)
			}, func() { mid = dbBytes(b, j.writer()) })
			end := dbBytes(b, j.writer())
			if err := j.Close(); err != nil {
				b.Fatal(err)
			}
			reportStorage(b, filepath.Join(dir, FileName), channels*seconds, end-mid, channels*(seconds-seconds/2))
		}
	})
	b.Run("v4", func(b *testing.B) {
		for range b.N {
			path := filepath.Join(b.TempDir(), FileName)
			db := openV4(b, path)
			var mid int64
			storageReadings(channels, seconds, func(rs []daq.Reading) { insertV4(b, db, 0, rs) },
				func() { mid = dbBytes(b, db) })
			end := dbBytes(b, db)
			if err := db.Close(); err != nil {
				b.Fatal(err)
			}
			reportStorage(b, path, channels*seconds, end-mid, channels*(seconds-seconds/2))
		}
	})
	b.Run("v3", func(b *testing.B) {
		for range b.N {
			path := filepath.Join(b.TempDir(), FileName)
			db := openV3(b, path)
			var mid int64
			storageReadings(channels, seconds, func(rs []daq.Reading) { insertV3(b, db, rs) },
				func() { mid = dbBytes(b, db) })
			end := dbBytes(b, db)
			if err := db.Close(); err != nil {
				b.Fatal(err)
			}
			reportStorage(b, path, channels*seconds, end-mid, channels*(seconds-seconds/2))
		}
	})
}

// dbBytes is the database's size as its connection sees it (page_count counts the
// pages still in the write-ahead log too).
func dbBytes(b *testing.B, db *sql.DB) int64 {
	var pages, size int64
	if err := db.QueryRow("PRAGMA page_count").Scan(&pages); err != nil {
		b.Fatal(err)
	}
	if err := db.QueryRow("PRAGMA page_size").Scan(&size); err != nil {
		b.Fatal(err)
	}
	return pages * size
}

// reportStorage reports the file's size per reading, and the growth per reading of
// the second half (grown bytes over grownReadings) also per channel-day at 1 Hz.
func reportStorage(b *testing.B, path string, readings int, grown int64, grownReadings int) {
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	if _, err := os.Stat(path + "-wal"); err == nil {
		b.Fatalf("%s-wal left beside the journal: the sizes would miss it", path)
	}
	b.ReportMetric(float64(st.Size())/float64(readings), "bytes/reading")
	growth := float64(grown) / float64(grownReadings)
	b.ReportMetric(growth, "growth-bytes/reading")
	b.ReportMetric(growth*86400/1e6, "MB/channel-day")
}

// openV3 creates a journal file of schema version 3 from its own statements, as the
// version-3 code did (write-ahead log, synchronous FULL).
func openV3(t testing.TB, path string) *sql.DB {
	t.Helper()
	db, err := sql.Open("sqlite", dsn(path, map[string][]string{"_pragma": {"journal_mode(WAL)", "synchronous(FULL)", "foreign_keys(1)"}}))
	if err != nil {
		t.Fatal(err)
	}
	db.SetMaxOpenConns(1)
	for _, q := range []string{ddlV1, ddlV2, ddlV3, "PRAGMA user_version = 3"} {
		if _, err := db.Exec(q); err != nil {
			t.Fatal(err)
		}
	}
	return db
}

// insertV3 writes readings in one transaction as the version-3 code did.
func insertV3(t testing.TB, db *sql.DB, rs []daq.Reading) {
	t.Helper()
	tx, err := db.Begin()
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback()
	for _, r := range rs {
		if _, err := tx.Exec("INSERT OR IGNORE INTO channels (logger, name) VALUES (?, ?)", r.Logger, r.Channel); err != nil {
			t.Fatal(err)
		}
		c := sql.NullFloat64{Float64: r.Celsius, Valid: r.Celsius == r.Celsius}
		if _, err := tx.Exec("INSERT INTO readings (channel_id, t, celsius, status, raw) VALUES"+
			" ((SELECT id FROM channels WHERE logger = ? AND name = ?), ?, ?, ?, ?)",
			r.Logger, r.Channel, r.Time.UnixNano(), c, r.Status.String(), r.Raw); err != nil {
			t.Fatal(err)
		}
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
}

// BenchmarkMigrateV3 opens a version-3 journal of channels × seconds readings
// (storageLoad's, SETTLE_STORAGE_* to change it), which migrates it to this package's
// schema, and reports the readings migrated per second of wall time.
// Run it once: go test ./daq/journal -run X -bench MigrateV3 -benchtime 1x
func BenchmarkMigrateV3(b *testing.B) {
	benchmarkMigrate(b, openV3, "INSERT INTO readings (channel_id, t, celsius, status, raw) VALUES (?, ?, ?, 'ok', '')",
		func(id int, r daq.Reading) []any { return []any{id, r.Time.UnixNano(), r.Celsius} })
}

// BenchmarkMigrateV4 opens a version-4 journal of channels × seconds readings
// (storageLoad's, SETTLE_STORAGE_* to change it; times in nanoseconds), which migrates
// it to ticks, and reports the readings migrated per second of wall time and the
// seconds a million readings take.
// Run it once: go test ./daq/journal -run X -bench MigrateV4 -benchtime 1x
func BenchmarkMigrateV4(b *testing.B) {
	benchmarkMigrate(b, openV4, "INSERT INTO readings (channel_id, t, k, v) VALUES (?, ?, 0, ?)",
		func(id int, r daq.Reading) []any {
			return []any{id, r.Time.UnixNano(), encodeValue(r.Celsius, r.Status)}
		})
}

// benchmarkMigrate writes storageLoad's readings into an older journal made by open,
// each with insert and args (the channel's id and the reading), then times the Open
// that migrates it and checks that every reading is there after.
func benchmarkMigrate(b *testing.B, open func(testing.TB, string) *sql.DB, insert string, args func(int, daq.Reading) []any) {
	channels, seconds := storageLoad(b)
	for range b.N {
		b.StopTimer()
		dir := b.TempDir()
		db := open(b, filepath.Join(dir, FileName))
		tx, err := db.Begin()
		if err != nil {
			b.Fatal(err)
		}
		storageReadings(channels, seconds, func(rs []daq.Reading) {
			for i, r := range rs {
				if _, err := tx.Exec("INSERT OR IGNORE INTO channels (id, logger, name) VALUES (?, ?, ?)", i+1, r.Logger, r.Channel); err != nil {
					b.Fatal(err)
				}
				if _, err := tx.Exec(insert, args(i+1, r)...); err != nil {
					b.Fatal(err)
				}
			}
		}, func() {})
		if err := tx.Commit(); err != nil {
			b.Fatal(err)
		}
		if err := db.Close(); err != nil {
			b.Fatal(err)
		}
		b.StartTimer()
		start := time.Now()
		j, err := Open(dir, Options{Logger: quiet})
		if err != nil {
			b.Fatal(err)
		}
		took := time.Since(start)
		b.StopTimer()
		if h := j.Health(); h.LastError != "" {
			b.Fatalf("migration failed: %s", h.LastError)
		}
		if n, err := j.Count(""); err != nil || n != int64(channels*seconds) {
			b.Fatalf("%d readings after migration (%v), want %d", n, err, channels*seconds)
		}
		j.Close()
		b.ReportMetric(float64(channels*seconds)/took.Seconds(), "readings/s")
		b.ReportMetric(took.Seconds()*1e6/float64(channels*seconds), "s/Mreadings")
	}
}
