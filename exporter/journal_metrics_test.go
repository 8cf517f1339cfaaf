package exporter

import (
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"

	"github.com/settle-lab/settle/daq/journal"
)

func TestJournalCollector(t *testing.T) {
	h := journal.Health{Writable: false, Pending: 1234, Dropped: 5, Committed: 98765,
		LastCommit: time.Date(2026, 3, 4, 10, 0, 0, 0, time.UTC)}
	c := NewJournalCollector(func() journal.Health { return h })
	want := `
# HELP settle_journal_writable 1 while the journal's last commit succeeded; 0 while readings wait in memory (disk full, folder unwritable).
# TYPE settle_journal_writable gauge
settle_journal_writable 0
# HELP settle_journal_pending_readings Readings held in memory, not yet committed.
# TYPE settle_journal_pending_readings gauge
settle_journal_pending_readings 1234
# HELP settle_journal_last_commit_timestamp_seconds Unix time of the journal's last successful commit.
# TYPE settle_journal_last_commit_timestamp_seconds gauge
settle_journal_last_commit_timestamp_seconds 1.7726184e+09
`
	// 2026-03-04T10:00:00Z is Unix 1772618400 (date -d 2026-03-04T10:00:00Z +%s).
	if err := testutil.CollectAndCompare(c, strings.NewReader(want), "settle_journal_writable",
		"settle_journal_pending_readings", "settle_journal_last_commit_timestamp_seconds"); err != nil {
		t.Error(err)
	}
	if problems, err := testutil.CollectAndLint(c); err != nil || len(problems) > 0 {
		t.Errorf("lint: %v %v", problems, err)
	}
	h = journal.Health{Writable: true}
	if n := testutil.CollectAndCount(c, "settle_journal_last_commit_timestamp_seconds"); n != 0 {
		t.Errorf("before any commit the last-commit series should be absent, got %d", n)
	}
}
