// Package exporter is settle's outside face: Prometheus metrics, the JSON API, the
// event stream, the status page and the HTTP server's safety limits. It computes no
// physics and stores nothing.
//
// # Where to start
//
//   - State is everything it reads: the engine's Bench (forecasts), the acquisition
//     table Latest (acquisition.go: newest reading, history and faults per channel),
//     the ports' counters and the acknowledgements (Acks).
//   - NewHandler serves the routes over State (ExampleNewHandler); NewServer wraps
//     them with timeouts, a connection limit and optional TLS.
//   - Metrics are built from State at scrape time (collector.go, series.go), never
//     kept in Prometheus types, so a channel removed from the configuration vanishes
//     from /metrics. NewRegistry gathers them in parts — acquisition, events,
//     forecasts, journal, notifications — each timed with its own duration and
//     success, and keeps the Go runtime's metrics in a registry of their own.
//   - notifyfeed.go feeds package notify from the engine's state on a poll;
//     events.go is the server-sent event stream; page.go the embedded status page
//     (exporter/web).
//
// Runs and their reports are not here: package runs serves /api/v1/runs and the
// daemon mounts it through Options.Runs. Only cmd/settle imports this package.
package exporter
