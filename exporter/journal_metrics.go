package exporter

import (
	"github.com/prometheus/client_golang/prometheus"

	"github.com/settle-lab/settle/daq/journal"
)

// JournalCollector exports the journal's health at scrape time, so a full disk or an
// unwritable data folder shows on a dashboard and in alerts while acquisition goes on.
type JournalCollector struct {
	health                                        func() journal.Health
	writable, pending, dropped, committed, commit *prometheus.Desc
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
	}
}

// Describe sends the descriptors.
func (c *JournalCollector) Describe(out chan<- *prometheus.Desc) {
	for _, d := range []*prometheus.Desc{c.writable, c.pending, c.dropped, c.committed, c.commit} {
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
}
