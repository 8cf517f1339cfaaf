package runs

import (
	"time"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
)

// Start starts a run of spec with targets, stored in the form predict.ParseTargets
// reads (predict.TargetsJSON). The daemon starts the runs its configuration names
// (channels[].run) with it.
func Start(j *journal.Journal, spec journal.RunSpec, targets []predict.Target) (journal.Run, error) {
	b, err := predict.TargetsJSON(targets)
	if err != nil {
		return journal.Run{}, err
	}
	spec.Targets = b
	return j.StartRun(spec)
}

// StartPlaced starts the run of a specimen the placement rule saw placed on channel
// at start: origin "auto", named after its start time, with the channel's targets.
func StartPlaced(j *journal.Journal, channel string, start time.Time, targets []predict.Target) (journal.Run, error) {
	return Start(j, journal.RunSpec{
		Channel:  channel,
		Specimen: "auto-" + start.UTC().Format("20060102T150405Z"),
		Origin:   "auto",
		Start:    start,
	}, targets)
}
