// Package exporter owns everything settle shows to the outside: the Prometheus
// collector, the JSON API, the health check and (later) the status page and
// notifications.
//
// It computes no physics. Acquisition state comes from daq (latest readings, port
// counters) and forecasts from predict; the collector snapshots both at scrape time, so a
// channel that disappears from the configuration also disappears from /metrics.
package exporter
