package runs

import (
	"testing"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/internal/rundemo"
	"github.com/settle-lab/settle/predict"
)

// The demo run (rundemo): our own invented scenario of a steel specimen cooling in
// still air; see package rundemo for its figures.
var (
	t0           = rundemo.T0
	demoCrossing = rundemo.Crossing
)

const (
	demoAmbient = rundemo.Ambient
	demoInitial = rundemo.Initial
	demoTau     = rundemo.Tau
)

func openJournal(t testing.TB) *journal.Journal { return rundemo.OpenJournal(t) }

// demoRun records the demo run in j the way the daemon does (RecordForecasts).
func demoRun(t testing.TB, j *journal.Journal) (journal.Run, *predict.Forecast) {
	return rundemo.Record(t, j, RecordForecasts)
}
