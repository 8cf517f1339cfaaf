// Package runs is the home of a run — one specimen's time on one channel, from its
// start to its stop — and of the forecasts recorded for it:
//
//   - lifecycle: runs started over HTTP (API), from the command line or when the
//     placement rule sees a specimen placed (StartPlaced), and stopped;
//   - the forecast recorder: RecordBench, RecordForecasts, RecordFinal and
//     RecordFinalBench write the daemon's forecasts into a run's history in the
//     journal;
//   - the forecast of a past run: Engine replays the journal the way the daemon
//     forecast it, Refit fits the run's readings afresh;
//   - the runs API (/api/v1/runs), which serves a run's report files through
//     package report.
//
// It writes runs and their forecast history; package report only reads them. The
// journal stores what runs gives it (targets encoded by predict.TargetsJSON, forecast
// states as predict's words) and knows no forecasting itself.
package runs
