package runs

import (
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
)

// RecordForecasts stores fc's target forecasts in run runID's history (the journal
// keeps only meaningful changes and the first observed crossing). The daemon calls it
// after each fit of a channel with an active run.
func RecordForecasts(j *journal.Journal, runID string, fc *predict.Forecast) {
	if fc == nil {
		return
	}
	for _, tf := range fc.Targets {
		j.RecordForecast(runID, forecastPoint(fc, tf))
	}
}

// forecastPoint is one target's forecast as the run's history stores it.
func forecastPoint(fc *predict.Forecast, tf predict.TargetForecast) journal.ForecastPoint {
	return journal.ForecastPoint{Time: fc.FittedAt, Target: tf.Target.Name, State: string(tf.State),
		At: tf.At, Earliest: tf.Earliest, Latest: tf.Latest, Estimated: tf.Estimated,
		Reached: tf.State == predict.StateReached}
}

// RecordFinal stores fc's target forecasts as the last of run runID's history, even
// when they moved too little for RecordForecasts: the daemon calls it as a run stops
// (and as it stops itself), so the history ends with the forecast it last fitted (the
// live view re-anchors it to the readings since, predict.Bench.Snapshot; the history
// keeps fits, which a replay reproduces).
func RecordFinal(j *journal.Journal, runID string, fc *predict.Forecast) {
	if fc == nil {
		return
	}
	for _, tf := range fc.Targets {
		j.RecordFinalForecast(runID, forecastPoint(fc, tf))
	}
}

// RecordBench stores the forecasts of every channel in states that has an active run
// (see RecordForecasts). The daemon calls it every few seconds with
// Bench.SnapshotFitted();
// it touches no disk itself (the journal commits with its next batch).
func RecordBench(j *journal.Journal, states []predict.ChannelState) {
	eachActive(j, states, RecordForecasts)
}

// RecordFinalBench ends the forecast history of every active run among states with
// its latest fit (RecordFinal; states from Bench.SnapshotFitted): the daemon calls it as
// it stops, so a report made afterwards replays exactly the readings that fit used.
func RecordFinalBench(j *journal.Journal, states []predict.ChannelState) {
	eachActive(j, states, RecordFinal)
}

// eachActive calls record with the forecast of every channel in states that has an
// active run.
func eachActive(j *journal.Journal, states []predict.ChannelState, record func(*journal.Journal, string, *predict.Forecast)) {
	for _, st := range states {
		if id, ok := j.ActiveRunID(st.Name); ok {
			record(j, id, st.Forecast)
		}
	}
}
