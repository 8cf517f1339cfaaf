package exporter_test

import (
	"bufio"
	"fmt"
	"net/http/httptest"
	"strings"
	"time"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/exporter"
	"github.com/settle-lab/settle/predict"
)

// The daemon's outside face over the two pieces of state it reads: the engine's bench
// (forecasts) and the acquisition table (newest readings). Nothing is stored in
// metrics: each scrape builds the series from that state, in parts (acquisition,
// forecasts, journal, ...) that are each timed. Our own invented rack: one plate at
// 88.4 °C. The example prints a few of the series a scrape of /metrics serves.
func ExampleNewHandler() {
	bench := predict.NewBench([]predict.ChannelSpec{{Name: "plate-1",
		Targets: []predict.Target{{Name: "handle", Celsius: 50, Handling: true}}}}, predict.TrackerOptions{})
	latest := exporter.NewLatest()
	r := daq.Reading{Logger: "rack-a", Channel: "plate-1", Time: time.Now(), Celsius: 88.4, Status: daq.StatusOK}
	latest.Record(r)
	bench.Observe(r.Channel, r.Time, r.Celsius)

	state := exporter.State{Bench: bench, Latest: latest}
	h := exporter.NewHandler(state, exporter.NewRegistry(state), exporter.Options{})
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest("GET", "/metrics", nil))
	sc := bufio.NewScanner(rec.Body)
	for sc.Scan() {
		line := sc.Text()
		if strings.HasPrefix(line, "settle_temperature_celsius{") || strings.HasPrefix(line, "settle_scrape_collector_success{") {
			fmt.Println(line)
		}
	}
	// Output:
	// settle_scrape_collector_success{collector="acquisition"} 1
	// settle_scrape_collector_success{collector="events"} 1
	// settle_scrape_collector_success{collector="forecasts"} 1
	// settle_scrape_collector_success{collector="journal"} 1
	// settle_scrape_collector_success{collector="notifications"} 1
	// settle_temperature_celsius{channel="plate-1"} 88.4
}
