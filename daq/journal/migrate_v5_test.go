package journal

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"slices"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// openV4 creates a journal file of schema version 4 from its own statements (ddlV1 to
// ddlV4 through the migration steps, as the version-4 code created it).
func openV4(t testing.TB, path string) *sql.DB {
	t.Helper()
	db, err := sql.Open("sqlite", dsn(path, map[string][]string{"_pragma": {"journal_mode(WAL)", "synchronous(FULL)", "foreign_keys(1)"}}))
	if err != nil {
		t.Fatal(err)
	}
	db.SetMaxOpenConns(1)
	for from := range 4 {
		if err := migrateStep(context.Background(), db, from); err != nil {
			t.Fatal(err)
		}
	}
	return db
}

// insertV4 writes readings of generation gen in one transaction as the version-4 code
// did (its statements: the time in Unix nanoseconds, a duplicate time's ordinal in k,
// a fault's text in raw_texts under the reading's key).
func insertV4(t testing.TB, db *sql.DB, gen int64, rs []daq.Reading) {
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
		var id int64
		if err := tx.QueryRow("SELECT id FROM channels WHERE logger = ? AND name = ?", r.Logger, r.Channel).Scan(&id); err != nil {
			t.Fatal(err)
		}
		if _, err := tx.Exec("INSERT INTO readings (channel_id, t, k, v) VALUES (?1, ?2, ?3 +"+
			" (coalesce((SELECT (max(k) >> 32) + 1 FROM readings WHERE channel_id = ?1 AND t = ?2), 0) << 32), ?4)",
			id, r.Time.UnixNano(), gen, encodeValue(r.Celsius, r.Status)); err != nil {
			t.Fatal(err)
		}
		if r.Raw != "" {
			if _, err := tx.Exec("INSERT INTO raw_texts (channel_id, t, k, raw) SELECT ?1, ?2, max(k), ?3 FROM readings WHERE channel_id = ?1 AND t = ?2",
				id, r.Time.UnixNano(), r.Raw); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
}

// A journal written by the version-4 code, with readings at nanosecond times of which
// several fall on one tick of 100 µs, migrates with every reading and every fault text
// kept: each time truncated to its tick, the readings of one channel on one tick in
// their version-4 order (by nanosecond time, then as written, across generations), k
// unique with the generation kept for ReplayBefore; a new reading at a migrated tick
// goes after them. Acknowledgements' segment starts and runs' bounds are rounded down
// to their ticks, and two runs that shared no reading still share none.
func TestMigrateV4ToTicks(t *testing.T) {
	dir := t.TempDir()
	db := openV4(t, filepath.Join(dir, FileName))
	base := t0.Add(time.Second)
	us := func(x float64) time.Time { return base.Add(time.Duration(x * 1000)) }
	rd := func(ch string, at time.Time, c float64, st daq.Status, raw string) daq.Reading {
		return daq.Reading{Logger: "rack", Channel: ch, Time: at, Celsius: c, Status: st, Raw: raw}
	}
	insertV4(t, db, 0, []daq.Reading{
		rd("a", us(10), 20.5, daq.StatusOK, ""),
		rd("a", us(50), 20.6, daq.StatusOK, ""),
		rd("a", us(50), math.NaN(), daq.StatusOpen, "OPEN"), // the same nanosecond again: ordinal 1 in version 4
		rd("a", us(99.999), 20.8, daq.StatusOK, ""),         // the last nanosecond of the tick
		rd("a", us(100), 20.9, daq.StatusOK, ""),            // the next tick
		rd("b", us(50), 30, daq.StatusOK, ""),
		rd("b", us(50.001), 31, daq.StatusOK, ""),
	})
	if _, err := db.Exec("INSERT INTO marks VALUES (1)"); err != nil { // a daemon restart (LastSeq)
		t.Fatal(err)
	}
	insertV4(t, db, 1, []daq.Reading{
		rd("a", us(30), 21, daq.StatusSpike, "21.0?"), // written later, earlier on the clock
		rd("a", us(100.001), 21.1, daq.StatusOK, ""),
	})
	for _, q := range []string{
		// Two acknowledgements of channel a on one tick (the second is the same specimen
		// at the new resolution) and one of b.
		fmt.Sprintf("INSERT INTO acknowledgements VALUES ('a', %d, %d, 'AB', 'r1'), ('a', %d, %d, 'CD', 'r1'), ('b', %d, %d, 'EF', '')",
			us(10).UnixNano(), t0.Add(10*time.Second).UnixNano(), us(60).UnixNano(), t0.Add(20*time.Second).UnixNano(),
			us(2e6+0.005).UnixNano(), t0.Add(30*time.Second).UnixNano()),
		// A fault text without its reading (settle writes none): not carried over.
		fmt.Sprintf("INSERT INTO raw_texts VALUES (1, %d, 0, 'orphan')", us(70).UnixNano()),
		// r1 from a reading's time to 60 µs; r2 from 1 ns after r1's stop (clampStart);
		// r3 on b, active, from its second reading's time.
		fmt.Sprintf("INSERT INTO runs (id, channel, specimen, started, stopped) VALUES ('r1', 'a', 'S1', %d, %d), ('r2', 'a', 'S2', %d, %d), ('r3', 'b', 'S3', %d, NULL)",
			us(10).UnixNano(), us(60).UnixNano(), us(60).UnixNano()+1, us(2e6).UnixNano(), us(50.001).UnixNano()),
	} {
		if _, err := db.Exec(q); err != nil {
			t.Fatal(err)
		}
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}

	j, err := Open(dir, Options{Logger: quiet, CommitInterval: time.Hour})
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	if h := j.Health(); h.LastError != "" {
		t.Fatalf("migration failed: %s", h.LastError)
	}
	show := func(rs []daq.Reading) string {
		var out []string
		for _, r := range rs {
			out = append(out, fmt.Sprintf("%s+%v:%v/%s/%s", r.Channel, r.Time.Sub(base), r.Celsius, r.Status, r.Raw))
		}
		return fmt.Sprint(out)
	}
	// Tick 0 of a: 10, 30, 50, 50 (as written), 99.999 µs; tick 1: 100, 100.001 µs.
	wantA := "[a+0s:20.5/ok/ a+0s:21/spike/21.0? a+0s:20.6/ok/ a+0s:NaN/open/OPEN a+0s:20.8/ok/ a+100µs:20.9/ok/ a+100µs:21.1/ok/]"
	if got := show(collect(t, j, "a", time.Time{}, time.Time{})); got != wantA {
		t.Errorf("channel a after migration:\n got %s\nwant %s", got, wantA)
	}
	if got, want := show(collect(t, j, "b", time.Time{}, time.Time{})), "[b+0s:30/ok/ b+0s:31/ok/]"; got != want {
		t.Errorf("channel b after migration: %s, want %s", got, want)
	}
	rdb, _ := j.reader()
	var ks []string
	rows, err := rdb.Query("SELECT r.t, r.k FROM readings r JOIN channels c ON c.id = r.channel_id WHERE c.name = 'a' ORDER BY r.t, r.k")
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var tk, k int64
		if err := rows.Scan(&tk, &k); err != nil {
			t.Fatal(err)
		}
		ks = append(ks, fmt.Sprintf("%d:%d+%d", tk-ticks(base), k>>32, k&genMask))
	}
	rows.Close()
	// tick:ordinal+generation.
	if want := "[0:0+0 0:1+1 0:2+0 0:3+0 0:4+0 1:0+0 1:1+1]"; fmt.Sprint(ks) != want {
		t.Errorf("keys of a (tick:ordinal+generation) %v, want %s", ks, want)
	}
	var texts int
	if err := rdb.QueryRow("SELECT count(*) FROM raw_texts").Scan(&texts); err != nil || texts != 2 {
		t.Errorf("%d fault texts (%v), want 2 (the orphan left behind)", texts, err)
	}
	var before []string
	if err := j.ReplayBefore(time.Time{}, 0, func(r daq.Reading) bool {
		before = append(before, fmt.Sprint(r.Celsius))
		return true
	}); err != nil {
		t.Fatal(err)
	}
	if want := "[20.5 20.6 NaN 20.8 30 31 20.9]"; fmt.Sprint(before) != want {
		t.Errorf("ReplayBefore the mark of generation 0: %v, want %s (generation 1 left out)", before, want)
	}

	acks, err := j.Acknowledgements(t0)
	if err != nil {
		t.Fatal(err)
	}
	var ackText []string
	for _, a := range acks {
		ackText = append(ackText, fmt.Sprintf("%s@%v:%s", a.Channel, a.Segment.Sub(base), a.By))
	}
	if want := "[a@0s:AB b@2s:EF]"; fmt.Sprint(ackText) != want {
		t.Errorf("acknowledgements %v, want %s (segments on their ticks, the first of a kept)", ackText, want)
	}

	runsText := map[string]string{}
	for _, id := range []string{"r1", "r2", "r3"} {
		run, err := j.Run(id)
		if err != nil {
			t.Fatal(err)
		}
		to := time.Time{}
		if !run.Active() {
			to = run.Stopped.Add(1)
		}
		runsText[id] = show(collect(t, j, run.Channel, run.Started, to))
	}
	// r1 keeps its first reading (it started at its time) and takes the rest of the
	// tick its stop fell on; r2 starts after that tick; r3 keeps the reading it started at.
	for id, want := range map[string]string{
		"r1": "[a+0s:20.5/ok/ a+0s:21/spike/21.0? a+0s:20.6/ok/ a+0s:NaN/open/OPEN a+0s:20.8/ok/]",
		"r2": "[a+100µs:20.9/ok/ a+100µs:21.1/ok/]",
		"r3": "[b+0s:30/ok/ b+0s:31/ok/]",
	} {
		if runsText[id] != want {
			t.Errorf("readings of run %s after migration:\n got %s\nwant %s", id, runsText[id], want)
		}
	}

	// A new reading at a migrated tick goes after the five there.
	j.Append(rd("a", us(20), 22, daq.StatusOK, ""))
	mustFlush(t, j)
	if got := collect(t, j, "a", base, base.Add(Tick)); len(got) != 6 || got[5].Celsius != 22 {
		t.Errorf("tick 0 of a after a new reading: %s, want the new one sixth", show(got))
	}
}

// ticks, ticksUp, tickTime and Truncate agree, before 1970 too, and beyond the years
// Unix nanoseconds can hold (1678–2262).
func TestTicks(t *testing.T) {
	for _, tc := range []struct {
		at        time.Time
		down, up  int64
		truncated time.Time
	}{
		{time.Unix(0, 0), 0, 0, time.Unix(0, 0)},
		{time.Unix(0, 1), 0, 1, time.Unix(0, 0)},
		{time.Unix(0, 99_999), 0, 1, time.Unix(0, 0)},
		{time.Unix(0, 100_000), 1, 1, time.Unix(0, 100_000)},
		{time.Unix(0, -1), -1, 0, time.Unix(0, -100_000)},
		{time.Unix(-1, 0), -10_000, -10_000, time.Unix(-1, 0)},
		{time.Unix(1773478801, 123_456_789), 17734788011234, 17734788011235, time.Unix(1773478801, 123_400_000)},
		{time.Date(3000, 1, 1, 0, 0, 0, 50, time.UTC), 32503680000 * 10_000, 32503680000*10_000 + 1, time.Date(3000, 1, 1, 0, 0, 0, 0, time.UTC)},
	} {
		if got := ticks(tc.at); got != tc.down {
			t.Errorf("ticks(%v) = %d, want %d", tc.at, got, tc.down)
		}
		if got := ticksUp(tc.at); got != tc.up {
			t.Errorf("ticksUp(%v) = %d, want %d", tc.at, got, tc.up)
		}
		if got := Truncate(tc.at); !got.Equal(tc.truncated) || !tickTime(tc.down).Equal(got) {
			t.Errorf("Truncate(%v) = %v, tickTime = %v, want %v", tc.at, got, tickTime(tc.down), tc.truncated)
		}
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for range 10_000 {
		at := time.Unix(rng.Int64N(1<<36)-1<<35, rng.Int64N(1e9))
		if !tickTime(ticks(at)).Equal(Truncate(at)) || Truncate(at).After(at) || at.Sub(Truncate(at)) >= Tick {
			t.Fatalf("%v: tickTime(ticks) %v, Truncate %v", at, tickTime(ticks(at)), Truncate(at))
		}
		if floorTick(at.UnixNano()) != Truncate(at).UnixNano() && at.Year() > 1678 && at.Year() < 2262 {
			t.Fatalf("%v: floorTick %d, Truncate %d", at, floorTick(at.UnixNano()), Truncate(at).UnixNano())
		}
	}
	// The SQL the migration rounds with gives the same ticks.
	j, _ := open(t, Options{})
	db, _ := j.reader()
	for _, ns := range []int64{0, 1, 99_999, 100_000, -1, -100_000, -100_001, 1773478801123456789} {
		var got int64
		if err := db.QueryRow("SELECT " + floorTickSQL(fmt.Sprint(ns))).Scan(&got); err != nil || got != ticks(time.Unix(0, ns)) {
			t.Errorf("floorTickSQL(%d) = %d (%v), want %d", ns, got, err, ticks(time.Unix(0, ns)))
		}
	}
}

// Readings(from, to) gives the readings whose time, as the journal gives it back
// (truncated to the Tick), is in [from, to), whatever the bounds' nanoseconds; for
// readings written on whole ticks (as the daemon writes them) that is exactly the set
// the nanosecond journal gave, the written time in [from, to). Adjacent ranges share no
// reading, and retention's inclusive stop agrees with Readings(start, stop + 1 ns).
func TestReadingsBoundsInTicks(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	base := t0.Add(time.Minute)
	var written []daq.Reading
	for i, off := range []time.Duration{0, 1, Tick - 1, Tick, Tick + 1, 2*Tick + 50_000, 3 * Tick, 5 * Tick} {
		r := daq.Reading{Logger: "rack", Channel: "e", Time: base.Add(off), Celsius: float64(i), Status: daq.StatusOK}
		written = append(written, r)
		j.Append(r)
	}
	mustFlush(t, j)
	in := func(r daq.Reading, from, to time.Time) bool {
		at := Truncate(r.Time)
		return !at.Before(from) && at.Before(to)
	}
	bounds := []time.Duration{-1, 0, 1, Tick - 1, Tick, Tick + 1, 2 * Tick, 2*Tick + 49_999, 2*Tick + 50_000, 3*Tick - 1, 3 * Tick, 5*Tick + 1, 6 * Tick}
	for _, a := range bounds {
		for _, b := range bounds {
			from, to := base.Add(a), base.Add(b)
			var want []float64
			for _, r := range written {
				if in(r, from, to) {
					want = append(want, r.Celsius)
				}
			}
			var got []float64
			for _, r := range collect(t, j, "e", from, to) {
				got = append(got, r.Celsius)
			}
			if !slices.Equal(got, want) {
				t.Errorf("Readings [%v, %v): %v, want %v", a, b, got, want)
			}
			// [from, b) and [b, to) split [from, to).
			var split []float64
			for _, r := range slices.Concat(collect(t, j, "e", from, to.Add(-(b-a)/2)), collect(t, j, "e", to.Add(-(b-a)/2), to)) {
				split = append(split, r.Celsius)
			}
			if a <= b && !slices.Equal(split, want) {
				t.Errorf("[%v, %v) split in two: %v, want %v", a, b, split, want)
			}
		}
	}
	// Written on whole ticks: the nanosecond answer.
	rng := rand.New(rand.NewPCG(5, 6))
	k := daq.Reading{Logger: "rack", Channel: "w"}
	var onTicks []time.Time
	for i := range 300 {
		k.Time, k.Celsius = base.Add(time.Duration(rng.Int64N(1000))*Tick), float64(i)
		onTicks = append(onTicks, k.Time)
		j.Append(k)
	}
	mustFlush(t, j)
	for range 300 {
		from, to := base.Add(time.Duration(rng.Int64N(int64(1000*Tick)))), base.Add(time.Duration(rng.Int64N(int64(1000*Tick))))
		want := 0
		for _, at := range onTicks {
			if !at.Before(from) && at.Before(to) {
				want++
			}
		}
		if got := len(collect(t, j, "w", from, to)); got != want {
			t.Fatalf("Readings [%v, %v) of readings on whole ticks: %d, want %d as in nanoseconds", from.Sub(base), to.Sub(base), got, want)
		}
	}

	// A run's retention takes what summarize counted: its start and stop inside ticks.
	run, err := j.StartRun(RunSpec{Channel: "e", Specimen: "S", Start: base.Add(1)})
	if err != nil {
		t.Fatal(err)
	}
	run, err = j.StopRun(run.ID, base.Add(2*Tick+49_999))
	if err != nil {
		t.Fatal(err)
	}
	// Truncated times in [1 ns, 2 ticks + 49.999 µs]: those written at 1 tick, 1 tick
	// + 1 ns and 2 ticks + 50 µs (not those at 1 ns and 1 tick − 1 ns, which come back
	// at 0, before the start).
	if run.Summary == nil || run.Summary.Readings != 3 {
		t.Fatalf("run summary %+v, want 3 readings", run.Summary)
	}
	st, err := j.Prune(time.Now().Add(48*time.Hour), Retention{Age: time.Hour})
	if err != nil || st.Deleted != 3 {
		t.Errorf("pruned %+v (%v), want the run's 3 readings", st, err)
	}
	var left []float64
	for _, r := range collect(t, j, "e", time.Time{}, time.Time{}) {
		left = append(left, r.Celsius)
	}
	if want := []float64{0, 1, 2, 6, 7}; !slices.Equal(left, want) {
		t.Errorf("readings left after retention %v, want %v", left, want)
	}
}

// FuzzTicks checks the tick arithmetic on any time: the truncated time is on a whole
// tick at most one tick before t, ticks and tickTime invert each other, and ticksUp is
// the first tick at or after t.
func FuzzTicks(f *testing.F) {
	for _, s := range [][2]int64{{0, 0}, {-1, 999_999_999}, {1773478801, 123_456_789}, {32503680000, 50}, {-62135596800, 0}} {
		f.Add(s[0], s[1])
	}
	f.Fuzz(func(t *testing.T, sec, nsec int64) {
		sec %= 1 << 40 // ±35,000 years: far beyond any reading, inside int64 ticks
		at := time.Unix(sec, nsec%int64(time.Second))
		n, up, tr := ticks(at), ticksUp(at), Truncate(at)
		if !tickTime(n).Equal(tr) || tr.After(at) || at.Sub(tr) >= Tick || ticks(tr) != n {
			t.Fatalf("%v: ticks %d → %v, Truncate %v", at, n, tickTime(n), tr)
		}
		if up != n && !(up == n+1 && tr.Before(at)) || up == n && !tr.Equal(at) {
			t.Fatalf("%v: ticksUp %d, ticks %d", at, up, n)
		}
	})
}
