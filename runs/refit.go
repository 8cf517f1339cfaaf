package runs

import (
	"fmt"
	"math"
	"strings"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/report"
)

// Refit fits the run's recorded OK readings afresh with predict's tracker, the run's
// stored targets and, when it parses (predict.ParseSpecimen), its specimen
// description, for a report made away from the daemon. It fits once, at the end
// (opt.FitEvery is ignored); segmentation follows opt. It returns nil and no
// error when there are no readings to fit.
func Refit(j *journal.Journal, run journal.Run, opt predict.TrackerOptions) (*predict.Forecast, error) {
	targets, err := predict.ParseTargets(run.Targets)
	if err != nil {
		return nil, fmt.Errorf("refit run %s: %w", run.ID, err)
	}
	readings, err := report.RunReadings(j, run)
	if err != nil {
		return nil, err
	}
	var notes []string
	if strings.TrimSpace(run.SpecimenSpec) != "" {
		sp, err := predict.ParseSpecimen([]byte(run.SpecimenSpec))
		if err != nil {
			notes = append(notes, fmt.Sprintf("The run's specimen description was not used: %v.", err))
		} else {
			opt.Specimen = &sp
		}
	}
	opt.FitEvery = math.MaxInt64 // one fit at the end, not the daemon's schedule
	tr := predict.NewTracker(targets, opt)
	for _, r := range readings {
		if r.OK() {
			tr.Add(r.Time, r.Celsius)
		}
	}
	fc := tr.Fit()
	if fc != nil {
		fc.Notes = append(fc.Notes, notes...)
		fc.Notes = append(fc.Notes, "Refitted from the journal for this report; the ambient is fitted.")
	}
	return fc, nil
}
