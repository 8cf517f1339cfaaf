package runs

import (
	"math"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
)

func TestRecordBench(t *testing.T) {
	j := openJournal(t)
	specs := []predict.ChannelSpec{
		{Name: "rack-1", Targets: []predict.Target{{Name: "handle", Celsius: 45}}},
		{Name: "rack-2", Targets: []predict.Target{{Name: "handle", Celsius: 45}}},
	}
	bench := predict.NewBench(specs, predict.TrackerOptions{FitEvery: 2 * time.Minute})
	run, err := j.StartRun(journal.RunSpec{Channel: "rack-1", Specimen: "S", Start: t0})
	if err != nil {
		t.Fatal(err)
	}
	for s := 0; s <= 600; s += 5 {
		c := demoAmbient + (demoInitial-demoAmbient)*math.Exp(-float64(s)/demoTau)
		for _, ch := range []string{"rack-1", "rack-2"} {
			bench.Observe(ch, t0.Add(time.Duration(s)*time.Second), c)
		}
		RecordBench(j, bench.Snapshot())
	}
	if err := j.Flush(); err != nil {
		t.Fatal(err)
	}
	h, err := j.ForecastHistory(run.ID)
	if err != nil || len(h) == 0 || h[len(h)-1].State != string(predict.StatePredicted) {
		t.Fatalf("history of the run on rack-1: %+v, %v; want predictions", h, err)
	}
	// The prediction should sit near the true crossing (demoCrossing s after t0).
	if last := h[len(h)-1]; math.Abs(last.At.Sub(t0).Seconds()-demoCrossing) > 30 {
		t.Errorf("last prediction %v, want t0 + %.0f s ± 30 s", last.At, demoCrossing)
	}
	runs, _ := j.Runs(journal.RunFilter{Channel: "rack-2"})
	if len(runs) != 0 {
		t.Errorf("rack-2 has runs %+v", runs)
	}
}
