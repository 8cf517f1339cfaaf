package journal

import (
	"database/sql"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// v3Reading is one reading as the version-3 code read it back.
type v3Reading struct {
	logger, channel string
	ns              int64
	bits            uint64 // the float64's bits: NaN compares too
	status          string
	raw             string
}

func (r v3Reading) String() string {
	return fmt.Sprintf("%s/%s@%d %#x %s %q", r.logger, r.channel, r.ns, r.bits, r.status, r.raw)
}

// A journal written by the version-3 code (its statements, its insert and its status
// update) migrates through version 4 to this package's schema with every reading
// identical: value bit for bit, status, raw text, time (truncated to the Tick since
// version 5: s2's readings were written 123 ns after the second), and the order of each
// channel's readings, duplicates of one time included. The old table and its two
// indexes are gone; the journal then takes new readings, a duplicate of a migrated
// time among them.
func TestMigrateV3KeepsEveryReading(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, FileName)
	db := openV3(t, path)
	at := func(s float64) time.Time { return t0.Add(time.Duration(s * float64(time.Second))) }
	r := func(logger, ch string, s, c float64, st daq.Status, raw string) daq.Reading {
		return daq.Reading{Logger: logger, Channel: ch, Time: at(s), Celsius: c, Status: st, Raw: raw}
	}
	var rs []daq.Reading
	for i := range 50 {
		rs = append(rs, r("rack", "s1", float64(i), 20+float64(i)/100, daq.StatusOK, ""),
			r("rack", "s2", float64(i)+0.000000123, (float64(i)*9/5+70.1-32)*5/9, daq.StatusOK, ""))
	}
	rs = append(rs,
		r("rack", "s1", 7, 99.9, daq.StatusOK, ""), // a repeated line: same time twice more
		r("rack", "s1", 7, 21.07, daq.StatusOK, ""),
		r("rack", "s2", 60, math.NaN(), daq.StatusOpen, "OPEN"),
		r("rack", "s2", 61, 0, daq.StatusUnparsable, "2#.5"),
		r("rack", "s2", 62, math.Copysign(0, -1), daq.StatusOK, ""),
		r("rack", "s2", 63, 1e300, daq.StatusRange, "1e300 mV"),
		r("oven", "s1", 3.5, 250.25, daq.StatusOK, ""), // same channel name on another logger
		r("oven", "s1", 4.5, 250.5, daq.StatusClock, ""),
	)
	insertV3(t, db, rs[:60])
	insertV3(t, db, rs[60:])
	// What the version-3 code did after: a cleaner's verdict and a status this settle
	// does not know (read back as "unknown").
	if _, err := db.Exec("UPDATE readings SET status = 'spike', raw = '20.11' WHERE channel_id = 1 AND t = ?", at(11).UnixNano()); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Exec("UPDATE readings SET status = 'smudged' WHERE channel_id = 1 AND t = ?", at(12).UnixNano()); err != nil {
		t.Fatal(err)
	}
	want := readV3(t, db)
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	if len(want) != len(rs) {
		t.Fatalf("version-3 file holds %d readings, want %d", len(want), len(rs))
	}

	// A reader (a report, an export) cannot migrate: it says what to do, and leaves
	// the file as it is.
	if ro, err := Open(dir, Options{Logger: quiet, ReadOnly: true}); err == nil || !strings.Contains(err.Error(), "version 3, this settle reads version 5: start the daemon") {
		t.Errorf("read-only open of a version-3 journal: %v, want the versions and what to do", err)
		if ro != nil {
			ro.Close()
		}
	}
	j, err := Open(dir, Options{Logger: quiet, CommitInterval: time.Hour})
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	if h := j.Health(); !h.Writable && h.LastError != "" {
		t.Fatalf("migration failed: %s", h.LastError)
	}
	var got []daq.Reading
	if err := j.Replay(time.Time{}, func(r daq.Reading) { got = append(got, r) }); err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) {
		t.Fatalf("replayed %d readings after migration, want %d", len(got), len(want))
	}
	// Replay's order across channels with the same time is the channel's; within
	// one logger and channel it is the version-3 order exactly.
	byChannel := func(list []v3Reading) map[string][]v3Reading {
		m := map[string][]v3Reading{}
		for _, r := range list {
			m[r.logger+"/"+r.channel] = append(m[r.logger+"/"+r.channel], r)
		}
		return m
	}
	var gotV3 []v3Reading
	for _, r := range got {
		gotV3 = append(gotV3, v3Reading{r.Logger, r.Channel, r.Time.UnixNano(), math.Float64bits(r.Celsius), r.Status.String(), r.Raw})
	}
	for i := range want {
		want[i].ns = floorTick(want[i].ns)
	}
	wm, gm := byChannel(want), byChannel(gotV3)
	for k, w := range wm {
		g := gm[k]
		if len(g) != len(w) {
			t.Errorf("%s: %d readings, want %d", k, len(g), len(w))
			continue
		}
		for i := range w {
			if g[i] != w[i] {
				t.Errorf("%s reading %d: got %v, want %v", k, i, g[i], w[i])
			}
		}
	}
	var v int
	var old int
	rdb, _ := j.reader()
	if err := rdb.QueryRow("PRAGMA user_version").Scan(&v); err != nil || v != SchemaVersion {
		t.Errorf("user_version %d (%v), want %d", v, err, SchemaVersion)
	}
	if err := rdb.QueryRow("SELECT count(*) FROM sqlite_master WHERE name IN ('readings_t', 'readings_channel_t', 'readings_v4', 'readings_v5', 'raw_texts_v5', 'acknowledgements_v5')").Scan(&old); err != nil || old != 0 {
		t.Errorf("%d of the old indexes or the copy's name left (%v)", old, err)
	}

	// New readings after the migration: a fourth reading at the repeated time stays too.
	j.Append(r("rack", "s1", 7, 18.5, daq.StatusOK, ""))
	mustFlush(t, j)
	var at7 []float64
	for _, rd := range collect(t, j, "s1", at(7), at(7.5)) {
		if rd.Logger == "rack" {
			at7 = append(at7, rd.Celsius)
		}
	}
	if fmt.Sprint(at7) != "[20.07 99.9 21.07 18.5]" {
		t.Errorf("readings of rack/s1 at 7 s: %v, want [20.07 99.9 21.07 18.5] (in the order written)", at7)
	}
}

// readV3 reads every reading of a version-3 file as the version-3 code did (its
// query, its NULL-as-NaN and its status names), in its replay order.
func readV3(t *testing.T, db *sql.DB) []v3Reading {
	t.Helper()
	rows, err := db.Query("SELECT c.logger, c.name, r.t, r.celsius, r.status, r.raw FROM readings r" +
		" JOIN channels c ON c.id = r.channel_id ORDER BY r.t, r.seq")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var out []v3Reading
	for rows.Next() {
		var (
			r  v3Reading
			c  sql.NullFloat64
			st string
		)
		if err := rows.Scan(&r.logger, &r.channel, &r.ns, &c, &st, &r.raw); err != nil {
			t.Fatal(err)
		}
		r.bits = math.Float64bits(v3Celsius(c))
		r.status = v3Status(st).String()
		out = append(out, r)
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

// Readings of one channel with the same time (a logger repeating its line) are all
// kept, in the order written, across a mark too; a status change reaches each of them
// and keeps its value; ReplayBefore leaves out the one written after the mark.
func TestSameTimeReadingsKept(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	r := reading("s1", 5)
	for _, c := range []float64{20.5, 20.25, 20.125} {
		r.Celsius = c
		j.Append(r)
	}
	mustFlush(t, j)
	mark, err := j.LastSeq()
	if err != nil {
		t.Fatal(err)
	}
	r.Celsius = 19.75
	j.Append(r)
	mustFlush(t, j)
	r.Status, r.Raw = daq.StatusSpike, "twice"
	j.Restatus(r)
	mustFlush(t, j)
	var got []string
	for _, rd := range collect(t, j, "s1", time.Time{}, time.Time{}) {
		got = append(got, fmt.Sprintf("%v %s %s", rd.Celsius, rd.Status, rd.Raw))
	}
	if want := "[20.5 spike twice 20.25 spike twice 20.125 spike twice 19.75 spike twice]"; fmt.Sprint(got) != want {
		t.Errorf("readings %v, want %s", got, want)
	}
	n := 0
	if err := j.ReplayBefore(time.Time{}, mark, func(daq.Reading) bool { n++; return true }); err != nil || n != 3 {
		t.Errorf("ReplayBefore the mark gave %d readings (%v), want the 3 written before it", n, err)
	}
	r.Status, r.Raw = daq.StatusOK, ""
	j.Restatus(r)
	mustFlush(t, j)
	for _, rd := range collect(t, j, "s1", time.Time{}, time.Time{}) {
		if rd.Status != daq.StatusOK || rd.Raw != "" {
			t.Errorf("after clearing: %v %s %q, want ok and no raw text", rd.Celsius, rd.Status, rd.Raw)
		}
	}
}

// Retention takes a pruned reading's fault text with it and leaves the others' (a
// stale text would otherwise attach to a later reading written at the same time).
func TestPruneTakesFaultTexts(t *testing.T) {
	j, _ := open(t, Options{CommitInterval: time.Hour})
	for i := range 700 {
		r := reading("c1", i)
		if i%50 == 0 {
			r.Status, r.Raw = daq.StatusOpen, fmt.Sprintf("OPEN %d", i)
		}
		j.Append(r)
	}
	mustFlush(t, j)
	run, err := j.StartRun(RunSpec{Channel: "c1", Specimen: "S", Start: t0.Add(100 * time.Second)})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := j.StopRun(run.ID, t0.Add(399*time.Second)); err != nil {
		t.Fatal(err)
	}
	if _, err := j.Prune(t0.Add(2*time.Hour), Retention{Age: time.Hour}); err != nil {
		t.Fatal(err)
	}
	var texts []string
	for _, r := range collect(t, j, "c1", time.Time{}, time.Time{}) {
		if r.Raw != "" {
			texts = append(texts, r.Raw)
		}
	}
	db, _ := j.reader()
	var n int
	if err := db.QueryRow("SELECT count(*) FROM raw_texts").Scan(&n); err != nil {
		t.Fatal(err)
	}
	// Faults at 0, 50, …, 650; the run (100–399 s) held 100, 150, …, 350.
	if want := "[OPEN 0 OPEN 50 OPEN 400 OPEN 450 OPEN 500 OPEN 550 OPEN 600 OPEN 650]"; fmt.Sprint(texts) != want || n != 8 {
		t.Errorf("fault texts after pruning %v (%d stored), want %s (8)", texts, n, want)
	}
}
