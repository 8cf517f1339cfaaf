package exporter

import (
	"errors"
	"fmt"
	"io/fs"
	"os"

	"github.com/prometheus/client_golang/prometheus"

	"github.com/settle-lab/settle/daq/journal"
)

// JournalCollector exports the journal's health at scrape time, so a full disk or an
// unwritable data folder shows on a dashboard and in alerts while acquisition goes on.
// It also reads the journal's size on disk; when that fails (the file was deleted
// under the daemon, its folder made unreadable) the collector fails, and the scrape
// reports the journal part with settle_scrape_collector_success 0.
type JournalCollector struct {
	health                                              func() journal.Health
	writable, pending, dropped, committed, commit, size *prometheus.Desc
}

// NewJournalCollector returns a collector over health (usually (*journal.Journal).Health).
func NewJournalCollector(health func() journal.Health) *JournalCollector {
	d := func(name, help string) *prometheus.Desc {
		return prometheus.NewDesc("settle_journal_"+name, help, nil, nil)
	}
	return &JournalCollector{
		health:    health,
		writable:  d("writable", "1 while the journal's last commit succeeded; 0 while readings wait in memory (disk full, folder unwritable)."),
		pending:   d("pending_readings", "Readings held in memory, not yet committed."),
		dropped:   d("dropped_readings_total", "Readings lost because the in-memory queue was full during a long disk outage."),
		committed: d("committed_readings_total", "Readings committed to the journal since the daemon started."),
		commit:    d("last_commit_timestamp_seconds", "Unix time of the journal's last successful commit."),
		size:      d("size_bytes", "Bytes the journal takes on disk: its file and its write-ahead log."),
	}
}

// Describe sends the descriptors.
func (c *JournalCollector) Describe(out chan<- *prometheus.Desc) {
	for _, d := range []*prometheus.Desc{c.writable, c.pending, c.dropped, c.committed, c.commit, c.size} {
		out <- d
	}
}

// Collect sends the journal's current health.
func (c *JournalCollector) Collect(out chan<- prometheus.Metric) {
	h := c.health()
	out <- prometheus.MustNewConstMetric(c.writable, prometheus.GaugeValue, boolFloat(h.Writable))
	out <- prometheus.MustNewConstMetric(c.pending, prometheus.GaugeValue, float64(h.Pending))
	out <- prometheus.MustNewConstMetric(c.dropped, prometheus.CounterValue, float64(h.Dropped))
	out <- prometheus.MustNewConstMetric(c.committed, prometheus.CounterValue, float64(h.Committed))
	if !h.LastCommit.IsZero() {
		out <- prometheus.MustNewConstMetric(c.commit, prometheus.GaugeValue, unixSeconds(h.LastCommit))
	}
	if h.Path == "" {
		return // no file to measure
	}
	n, err := sizeOnDisk(h.Path)
	if err != nil {
		out <- prometheus.NewInvalidMetric(c.size, err)
		return
	}
	out <- prometheus.MustNewConstMetric(c.size, prometheus.GaugeValue, float64(n))
}

// sizeOnDisk is the size of the SQLite file at path and of its write-ahead log, which
// may be absent.
func sizeOnDisk(path string) (int64, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return 0, fmt.Errorf("journal size: %w", err)
	}
	wal, err := os.Stat(path + "-wal")
	switch {
	case err == nil:
		return fi.Size() + wal.Size(), nil
	case errors.Is(err, fs.ErrNotExist):
		return fi.Size(), nil
	}
	return 0, fmt.Errorf("journal size: %w", err)
}
