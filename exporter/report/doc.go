// Package report turns a run in the journal into the files a lab attaches to its test
// record — a CSV of the readings, a JSON summary (specimen, model, fitted parameters,
// h, Biot number, each target's observed crossing and how the forecast converged) and
// a PNG figure (readings, fitted curve, interval band, targets, forecast history) — and
// serves runs over HTTP (RunsAPI: list, show, start, stop, report files).
//
// It computes no physics: a model comes from predict, either the daemon's live forecast
// or a refit of the recorded readings (Refit). Forecasts are estimates; wherever a
// handling target appears, the summary carries the handling cautions.
package report
