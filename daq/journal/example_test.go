package journal_test

import (
	"fmt"
	"log"
	"os"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/daq/journal"
)

// Record readings, mark a run and read them back, as the daemon and a report do.
func Example() {
	dir, err := os.MkdirTemp("", "settle-journal-example")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)
	j, err := journal.Open(dir, journal.Options{})
	if err != nil {
		log.Fatal(err)
	}
	defer j.Close()

	start := time.Date(2026, 3, 14, 9, 0, 0, 0, time.UTC)
	run, err := j.StartRun(journal.RunSpec{Channel: "rack-3", Specimen: "S-041", Start: start})
	if err != nil {
		log.Fatal(err)
	}
	for i, c := range []float64{180, 151.2, 127.4} {
		j.Append(daq.Reading{Channel: "rack-3", Time: start.Add(time.Duration(i) * time.Minute), Celsius: c})
	}
	if err := j.Flush(); err != nil { // the writer commits every second on its own
		log.Fatal(err)
	}
	for r, err := range j.Readings("rack-3", start, time.Time{}) {
		if err != nil {
			log.Fatal(err)
		}
		fmt.Println(r.Time.UTC().Format("15:04"), r.Celsius, r.Status)
	}
	run, err = j.StopRun(run.ID, start.Add(2*time.Minute))
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println(run.ID, run.Summary.Readings, *run.Summary.MinCelsius)
	// Output:
	// 09:00 180 ok
	// 09:01 151.2 ok
	// 09:02 127.4 ok
	// 20260314T090000Z-rack-3 3 127.4
}
