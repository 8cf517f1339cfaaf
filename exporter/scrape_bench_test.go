package exporter

import (
	"fmt"
	"io"
	"math"
	"net/http/httptest"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/promhttp"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict"
)

// BenchmarkScrape1000Channels times one /metrics scrape (gathering and text encoding,
// through promhttp as Prometheus would get it) of a bench of 1,000 channels, each with a
// fitted forecast and two targets, plus the Go and process collectors.
func BenchmarkScrape1000Channels(b *testing.B) {
	const n = 1000
	base := testState()
	fc := base.Bench.Snapshot()[0].Forecast
	bench := make(fakeBench, n)
	latest := NewLatest()
	for i := range bench {
		name := fmt.Sprintf("rack%02d-pos%02d", i/20, i%20)
		bench[i] = predict.ChannelState{Name: name, Role: predict.RolePosition, LastTime: t0, LastCelsius: 100 + math.Mod(float64(i), 50),
			Readings: 240, Forecast: fc}
		latest.Record(daq.Reading{Channel: name, Time: t0.Add(time.Duration(i) * time.Millisecond), Celsius: 100})
	}
	h := promhttp.HandlerFor(NewRegistry(State{Bench: bench, Latest: latest}), promhttp.HandlerOpts{})
	req := httptest.NewRequest("GET", "/metrics", nil)
	var size int
	b.ResetTimer()
	for range b.N {
		w := httptest.NewRecorder()
		h.ServeHTTP(w, req)
		size = w.Body.Len()
		_, _ = io.Copy(io.Discard, w.Body)
	}
	b.ReportMetric(float64(size), "bytes/scrape")
}
