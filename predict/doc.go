// Package predict is the engine: it turns one channel's cleaned readings into a
// Forecast — which model fits, its parameters, and when each target is crossed, with
// an interval and a state that never claims more than the readings show.
//
// # Where to start
//
//   - Tracker is one specimen position as the daemon runs it (ExampleTracker): Add
//     each cleaned reading (SetAmbient with the room's air when it is measured), and
//     the tracker finds the specimen's segment, fits on its schedule and keeps the
//     latest Forecast; between fits each reading re-anchors it (its curve moved along
//     itself to where the readings are: predicted times move, states never), and
//     Forecast.UpdatedAt says which reading it reflects. Bench is a rack of trackers
//     keyed by channel, with a worker pool for the fits and Restore for resuming from
//     the journal.
//   - Analyze is one whole fit of a segment, as `settle fit` and reports use it:
//     Prepare cuts the segment (onset, spikes), then Analyze chooses the model and
//     forecasts the targets.
//   - FitLumped (ExampleFitLumped) is the lumped exponential alone, by variable
//     projection; FitH fits a temperature-dependent surface coefficient
//     (SurfaceLaw: natural convection and radiation, or constant convection); the
//     conduction models for thick specimens come from predict/conduction.
//
// # Files
//
// lumped.go and varpro.go: the exponential; surfacelaw.go, surfacefit.go,
// surfaceforecast.go: the h(T) curve, its fit and crossings; thickfit.go: conduction
// for a large Biot number; emissivity.go: the emissivity fitted from a wide curve;
// analyze.go: model choice by information criterion, with a note for each decision;
// backtest.go: each interval's model-form term from the segment's own earlier
// cutoffs; forecast.go: crossings, intervals and the states (reached and ready only
// from readings); segment.go: onset, direction, spikes; tracker.go and bench.go: the
// daemon's schedule; reanchor.go: the forecast between fits; specimen.go and specimen_check.go: the one specimen schema;
// targets.go: the target codec runs and the API share; cautions.go: the handling
// cautions every screen shows.
//
// # What it does not do
//
// It opens no port, file or socket, and imports neither the configuration nor the
// acquisition packages: config builds ChannelSpecs from a file, cmd/settle feeds
// readings in. Times inside a fit are seconds from the segment's start; times in a
// Forecast are absolute on the readings' own clock, so replays and time-lapse
// simulations keep physical time.
package predict
