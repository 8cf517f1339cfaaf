package exporter

import (
	"fmt"
	"io"
	"math"
	"net/http"
	"net/http/httptest"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/promhttp"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict"
)

// scrapeBench is a bench of 1,000 channels, each with a fitted forecast and two targets
// and a reading, and a /metrics handler over it (metricsHandler over NewRegistry, plus the
// Go and process collectors, as the daemon serves it).
type scrapeBench struct {
	bench  fakeBench
	latest *Latest
	h      http.Handler
}

func newScrapeBench() *scrapeBench {
	const n = 1000
	base := testState()
	fc := base.Bench.Snapshot()[0].Forecast
	sb := &scrapeBench{bench: make(fakeBench, n), latest: NewLatest()}
	for i := range sb.bench {
		name := fmt.Sprintf("rack%02d-pos%02d", i/20, i%20)
		sb.bench[i] = predict.ChannelState{Name: name, Role: predict.RolePosition, LastTime: t0, LastCelsius: 100 + math.Mod(float64(i), 50),
			Readings: 240, Forecast: fc}
		sb.latest.Record(daq.Reading{Channel: name, Time: t0.Add(time.Duration(i) * time.Millisecond), Celsius: 100})
	}
	sb.h = metricsHandler(NewRegistry(State{Bench: sb.bench, Latest: sb.latest}))
	return sb
}

// newReadings gives every channel a new reading, as 1 Hz loggers do between scrapes.
func (sb *scrapeBench) newReadings(k int) {
	for i := range sb.bench {
		sb.bench[i].LastCelsius -= 0.01
		sb.latest.Record(daq.Reading{Channel: sb.bench[i].Name, Time: t0.Add(time.Duration(k)*time.Second + time.Duration(i)*time.Millisecond),
			Celsius: sb.bench[i].LastCelsius})
	}
}

func (sb *scrapeBench) run(b *testing.B, req *http.Request, between func(k int)) {
	var size int
	b.ResetTimer()
	for k := range b.N {
		if between != nil {
			b.StopTimer()
			between(k)
			b.StartTimer()
		}
		w := httptest.NewRecorder()
		sb.h.ServeHTTP(w, req)
		size = w.Body.Len()
		_, _ = io.Copy(io.Discard, w.Body)
	}
	b.ReportMetric(float64(size), "bytes/scrape")
}

// BenchmarkScrape1000Channels times one /metrics scrape (gathering and text encoding,
// through promhttp as Prometheus would get it) of a bench of 1,000 channels, each with a
// fitted forecast and two targets, plus the Go and process collectors. The state does
// not change between scrapes.
func BenchmarkScrape1000Channels(b *testing.B) {
	newScrapeBench().run(b, httptest.NewRequest("GET", "/metrics", nil), nil)
}

// BenchmarkScrape1000ChannelsNewReadings is BenchmarkScrape1000Channels with a new
// reading on every channel between scrapes (not timed): the temperature and reading-time
// series change, the forecasts do not.
func BenchmarkScrape1000ChannelsNewReadings(b *testing.B) {
	sb := newScrapeBench()
	sb.run(b, httptest.NewRequest("GET", "/metrics", nil), sb.newReadings)
}

// BenchmarkScrape1000ChannelsGzip is BenchmarkScrape1000ChannelsNewReadings asking for
// gzip, as Prometheus does (Accept-Encoding: gzip): compression included.
func BenchmarkScrape1000ChannelsGzip(b *testing.B) {
	sb := newScrapeBench()
	req := httptest.NewRequest("GET", "/metrics", nil)
	req.Header.Set("Accept-Encoding", "gzip")
	sb.run(b, req, sb.newReadings)
}

// BenchmarkScrape1000ChannelsGzipPromhttp is BenchmarkScrape1000ChannelsGzip served
// by promhttp alone with the same limits (its own compression at gzip's default level,
// its own timeout), the baseline metricsHandler is measured against.
func BenchmarkScrape1000ChannelsGzipPromhttp(b *testing.B) {
	sb := newScrapeBench()
	reg := NewRegistry(State{Bench: sb.bench, Latest: sb.latest})
	sb.h = promhttp.HandlerFor(reg, promhttp.HandlerOpts{Registry: reg, MaxRequestsInFlight: 4, Timeout: scrapeTimeout})
	req := httptest.NewRequest("GET", "/metrics", nil)
	req.Header.Set("Accept-Encoding", "gzip")
	sb.run(b, req, sb.newReadings)
}
