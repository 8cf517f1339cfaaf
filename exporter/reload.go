package exporter

import (
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"
)

// ConfigReloads exports the outcome of the daemon's configuration reloads (SIGHUP) as
// Prometheus exports its own: settle_config_last_reload_successful is 1 while the
// last reload succeeded (or none was tried) and 0 after one was refused, and
// settle_config_last_reload_success_timestamp_seconds is the time of the last
// successful load, the first one included. It outlives the daemons it is registered
// with: a reload builds a new daemon and registers it again.
type ConfigReloads struct {
	mu     sync.Mutex
	ok     bool
	loaded time.Time

	okDesc, loadedDesc *prometheus.Desc
}

// NewConfigReloads returns the reloads of a configuration first loaded at loaded.
func NewConfigReloads(loaded time.Time) *ConfigReloads {
	return &ConfigReloads{ok: true, loaded: loaded,
		okDesc: prometheus.NewDesc("settle_config_last_reload_successful",
			"1 when the last configuration reload (SIGHUP) succeeded or none was tried, 0 when it was refused and the previous configuration runs on.", nil, nil),
		loadedDesc: prometheus.NewDesc("settle_config_last_reload_success_timestamp_seconds",
			"Unix time of the last successful configuration load, the daemon's first included.", nil, nil)}
}

// Succeeded records a reload whose configuration runs since at.
func (c *ConfigReloads) Succeeded(at time.Time) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.ok, c.loaded = true, at
}

// Failed records a refused reload: the previous configuration runs on.
func (c *ConfigReloads) Failed() {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.ok = false
}

// Describe sends the descriptors.
func (c *ConfigReloads) Describe(out chan<- *prometheus.Desc) { out <- c.okDesc; out <- c.loadedDesc }

// Collect sends the last reload's outcome and the last successful load's time.
func (c *ConfigReloads) Collect(out chan<- prometheus.Metric) {
	c.mu.Lock()
	ok, loaded := c.ok, c.loaded
	c.mu.Unlock()
	out <- prometheus.MustNewConstMetric(c.okDesc, prometheus.GaugeValue, boolFloat(ok))
	out <- prometheus.MustNewConstMetric(c.loadedDesc, prometheus.GaugeValue, unixSeconds(loaded))
}
