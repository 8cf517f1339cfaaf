// Package report turns a run in the journal into the files a lab attaches to its test
// record — a CSV of the readings, a JSON summary (specimen, model, fitted parameters,
// h, Biot number, each target's observed crossing and how the forecast converged) and
// a PNG figure (readings, fitted curve, interval band, targets, forecast history).
//
// It only reads: a report is made from a run as the journal holds it and a forecast
// handed in (the daemon's live one, or one package runs rebuilt). Starting and
// stopping runs, recording their forecasts and serving them over HTTP belong to
// package runs, which uses this one for the report files; `settle fit` uses its
// Figure for curve files.
//
// It computes no physics. Forecasts are estimates; wherever a handling target
// appears, the summary and the figure carry predict.HandlingCautions.
package report
