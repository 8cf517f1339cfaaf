package exporter

import (
	"bytes"
	"flag"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil"
	"github.com/prometheus/common/expfmt"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/exporter")

// fakeBench is a fixed snapshot: enough for the exposition and the API shape. The real
// bench is exercised end to end in cmd/settle.
type fakeBench []predict.ChannelState

func (f fakeBench) Snapshot() []predict.ChannelState { return f }

var t0 = time.Date(2026, 3, 4, 10, 0, 0, 0, time.UTC)

func testState() State {
	handle := predict.Target{Name: "handle", Celsius: 50, Handling: true}
	settled := predict.Target{Name: "settled", Celsius: math.NaN(), Within: 2}
	fc := &predict.Forecast{
		Model: "lumped", TimeConstant: 1200 * time.Second, Ambient: 21.5, RMSE: 0.12,
		Biot: math.NaN(), Points: 240, SegmentStart: t0, FittedAt: t0.Add(8 * time.Minute),
		Params: []predict.Param{{Name: "tau_s", Value: 1200, StdErr: 15, Unit: "s"}},
		Notes:  []string{"lumped model: ambient measured on channel ambient"},
		Targets: []predict.TargetForecast{
			{Target: handle, Celsius: 50, State: predict.StatePredicted, At: t0.Add(40 * time.Minute),
				Earliest: t0.Add(37 * time.Minute), Latest: t0.Add(44 * time.Minute)},
			{Target: settled, Celsius: 23.5, State: predict.StateInsufficient},
		},
	}
	latest := NewLatest()
	latest.now = func() time.Time { return t0.Add(8 * time.Minute) } // arrival on time
	latest.Record(daq.Reading{Channel: "steel", Time: t0.Add(8 * time.Minute), Celsius: 182.4})
	latest.Record(daq.Reading{Channel: "tile", Time: t0.Add(8 * time.Minute), Status: daq.StatusOpen, Raw: "OPEN"})
	return State{
		Bench: fakeBench{
			{Name: "steel", Ambient: "ambient", LastTime: t0.Add(8 * time.Minute), LastCelsius: 182.4, Readings: 240, Forecast: fc},
			{Name: "tile", LastCelsius: math.NaN()},
		},
		Latest: latest,
		Ports: func() []daq.PortStats {
			return []daq.PortStats{{Logger: "rack2", Port: "/dev/ttyUSB0", Up: true, Reconnects: 2,
				ReadErrors: 1, ParseErrors: 3, LastReading: t0.Add(8 * time.Minute)}}
		},
	}
}

func TestCollectorExposition(t *testing.T) {
	reg := prometheus.NewPedanticRegistry()
	reg.MustRegister(NewCollector(testState()))
	golden := filepath.Join("..", "testdata", "exporter", "metrics.txt")
	families, err := reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	enc := expfmt.NewEncoder(&buf, expfmt.NewFormat(expfmt.TypeTextPlain))
	for _, mf := range families {
		if err := enc.Encode(mf); err != nil {
			t.Fatal(err)
		}
	}
	if len(families) < 15 {
		t.Errorf("gathered %d metric families, want at least 15", len(families))
	}
	compareGolden(t, golden, buf.Bytes())
	problems, err := testutil.GatherAndLint(reg)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range problems {
		t.Errorf("lint %s: %s", p.Metric, p.Text)
	}
}

func TestCollectorValues(t *testing.T) {
	c := NewCollector(testState())
	want := `
# HELP settle_target_eta_timestamp_seconds Predicted Unix time at which the channel reaches the target (an estimate).
# TYPE settle_target_eta_timestamp_seconds gauge
settle_target_eta_timestamp_seconds{channel="steel",target="handle"} 1.7726208e+09
# HELP settle_channel_fault 1 while the channel's latest reading is a fault of this status.
# TYPE settle_channel_fault gauge
settle_channel_fault{channel="tile",status="open"} 1
`
	// 2026-03-04T10:40:00Z is Unix 1772620800 (date -d 2026-03-04T10:40:00Z +%s).
	if err := testutil.CollectAndCompare(c, strings.NewReader(want),
		"settle_target_eta_timestamp_seconds", "settle_channel_fault"); err != nil {
		t.Error(err)
	}
	// A target without a valid forecast has no ETA series; a channel without a fit has
	// no fit series; a channel without readings has no temperature.
	if n := testutil.CollectAndCount(c, "settle_target_eta_timestamp_seconds"); n != 1 {
		t.Errorf("eta series = %d, want 1 (the insufficient target has none)", n)
	}
	if n := testutil.CollectAndCount(c, "settle_fit_time_constant_seconds"); n != 1 {
		t.Errorf("time-constant series = %d, want 1", n)
	}
	if n := testutil.CollectAndCount(c, "settle_temperature_celsius"); n != 1 {
		t.Errorf("temperature series = %d, want 1", n)
	}
}

func compareGolden(t *testing.T, path string, got []byte) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./exporter -update to create it)", err)
	}
	if string(want) != string(got) {
		t.Errorf("%s differs from the output (go test ./exporter -update rewrites it):\n--- got\n%s", path, got)
	}
}
