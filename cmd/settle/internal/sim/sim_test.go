package sim

import (
	"bytes"
	"context"
	"math"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/daq"
)

// steel returns the demo's hot carbon-steel cylinder.
func steel(t *testing.T) Specimen {
	t.Helper()
	sp := DemoScenario().Specimens[0]
	if sp.Channel != "steel-cyl-a" || sp.StartC != 850 {
		t.Fatalf("demo specimen 0 is %q at %v °C, want the steel cylinder at 850 °C", sp.Channel, sp.StartC)
	}
	return sp
}

func still(sp ...Specimen) Scenario {
	return Scenario{Specimens: sp, Ambient: Ambient{Channel: "amb", MeanC: 20}}
}

// With h constant the ODE is Newton cooling: θ/θi = exp(−t/τ), τ = ρcV/(hA)
// (Incropera 6th ed. Eq. 5.6, lumped capacitance; shared/reference section 2.1).
func TestConstantHMatchesClosedForm(t *testing.T) {
	sp := steel(t)
	sp.FixedH = 25
	tau := sp.TimeConstant(sp.FixedH)
	s := NewSim(still(sp), time.Second, 1)
	for _, tm := range []float64{10, 100, 0.5 * tau, tau, 3 * tau} {
		s.Advance(tm - s.Time())
		want := 20 + (850-20)*math.Exp(-tm/tau)
		if got := s.True()[0]; math.Abs(got-want) > 1e-6*(850-20) {
			t.Errorf("t = %.0f s (τ = %.0f s): T = %.6f, want %.6f", tm, tau, got, want)
		}
	}
}

// The heat the body lost, ρcV(T0 − T), equals ∫ h(T)·A·(T − T∞) dt (first law).
func TestEnergyBalance(t *testing.T) {
	sp := steel(t)
	s := NewSim(still(sp), time.Second, 1)
	const dt, end = 0.5, 1800.0
	var lost float64
	prev := sp.H(sp.StartC, 20) * sp.AreaM2 * (sp.StartC - 20)
	for s.Time() < end-1e-9 {
		s.Advance(dt)
		T := s.True()[0]
		q := sp.H(T, 20) * sp.AreaM2 * (T - 20)
		lost += (prev + q) / 2 * dt // trapezoid rule
		prev = q
	}
	m := sp.Material
	stored := m.Density * m.SpecificHeat * sp.VolumeM3 * (sp.StartC - s.True()[0])
	if math.Abs(lost-stored) > 0.002*stored {
		t.Errorf("heat lost %.1f J, stored-energy drop %.1f J: differ by more than 0.2 %%", lost, stored)
	}
}

// Radiation makes the hot steel cool faster at first than Newton cooling with one
// constant h fitted to the whole curve predicts (DESIGN.md, the physics, item 2). The
// fit knows the start and ambient temperatures, as the tracker does: ln(θ/θi) = −t/τ.
func TestHotSteelBeatsConstantHFit(t *testing.T) {
	sp := steel(t)
	s := NewSim(still(sp), time.Second, 1)
	thetaI := sp.StartC - 20
	var stt, sty float64
	for s.True()[0] > 60 {
		tm, y := s.Time(), math.Log((s.True()[0]-20)/thetaI)
		stt += tm * tm
		sty += tm * y
		s.Advance(10)
	}
	tau := -stt / sty
	const early = 120.0
	s = NewSim(still(sp), time.Second, 1)
	s.Advance(early)
	fitted := 20 + thetaI*math.Exp(-early/tau)
	if got := s.True()[0]; got >= fitted-20 {
		t.Errorf("at %v s the steel is %.1f °C; a constant-h fit (τ = %.0f s) predicts %.1f °C: want the real one at least 20 K cooler", early, got, tau, fitted)
	}
	// And h itself falls several-fold from 850 °C to 60 °C.
	if hHot, hCold := sp.H(850, 20), sp.H(60, 20); hHot < 5*hCold {
		t.Errorf("h(850 °C) = %.1f, h(60 °C) = %.1f W/m²K: want a strongly temperature-dependent h", hHot, hCold)
	}
}

// The demo specimens must be lumped bodies (Bi < 0.1, common practice) at their hottest,
// or the simulator's model would not describe them.
func TestDemoSpecimensAreLumped(t *testing.T) {
	for _, sp := range DemoScenario().Specimens {
		h := sp.H(sp.StartC, 21.5)
		bi := h * sp.VolumeM3 / sp.AreaM2 / sp.Material.Conductivity
		if bi >= 0.1 {
			t.Errorf("%s: Bi = %.3f at %v °C, want < 0.1", sp.Channel, bi, sp.StartC)
		}
	}
}

func runLines(t *testing.T, src Lines, opt Options) []string {
	t.Helper()
	var buf bytes.Buffer
	if err := Run(context.Background(), &buf, src, opt); err != nil {
		t.Fatal(err)
	}
	return strings.Split(strings.TrimSuffix(buf.String(), "\n"), "\n")
}

// Ten physical minutes of the demo parse with the line parser configured by DemoConfig.
func TestDemoOutputParses(t *testing.T) {
	sc := DemoScenario()
	cfg := sc.DemoConfig("/dev/null")
	p, err := daq.NewLineParser(cfg.Loggers[0].Name, cfg.Loggers[0].Line)
	if err != nil {
		t.Fatal(err)
	}
	lines := runLines(t, NewSim(sc, DefaultInterval, 7), Options{Duration: 10 * time.Minute})
	if want := "# t_s,steel-cyl-a,brass-sphere-b,alu-plate-c,alumina-tile-d,rack2-ambient"; lines[0] != want {
		t.Errorf("header = %q, want %q", lines[0], want)
	}
	if len(lines) != 1+301 {
		t.Fatalf("%d lines for 10 min at 2 s, want header + 301", len(lines))
	}
	t0 := time.Date(2025, 3, 14, 15, 0, 0, 0, time.UTC)
	var last []daq.Reading
	for i, l := range lines {
		rs, err := p.Parse([]byte(l), t0)
		if err != nil {
			t.Fatalf("line %d %q: %v", i, l, err)
		}
		for _, r := range rs {
			if !r.OK() {
				t.Fatalf("line %d: %s not ok: %+v", i, r.Channel, r)
			}
		}
		if i > 0 && rs[0].Time.Sub(t0) != time.Duration(i-1)*DefaultInterval {
			t.Errorf("line %d: time %v after start, want %v", i, rs[0].Time.Sub(t0), time.Duration(i-1)*DefaultInterval)
		}
		if len(rs) > 0 {
			last = rs
		}
	}
	// After ten minutes each specimen is between ambient and its start, the steel much
	// cooler than it started, and the ambient within its drift.
	for i, sp := range sc.Specimens {
		if c := last[i].Celsius; c <= 22 || c >= sp.StartC {
			t.Errorf("%s after 10 min = %.1f °C, want between ambient and %v", sp.Channel, c, sp.StartC)
		}
	}
	if c := last[0].Celsius; c > 500 {
		t.Errorf("steel after 10 min = %.1f °C, want well below 500", c)
	}
	if amb := last[4].Celsius; math.Abs(amb-21.5) > 0.3+0.3 {
		t.Errorf("ambient = %.1f °C, want 21.5 ± 0.3 drift (+ noise)", amb)
	}
}

// Noise is Gaussian with the configured spread, quantised to 0.1 °C, and reproducible
// from the seed.
func TestNoiseAndSeed(t *testing.T) {
	sp := steel(t)
	sp.StartC, sp.FixedH = 20, 10 // at ambient: the true value stays 20.0
	sc := still(sp)
	sc.NoiseC, sc.ResolutionC = 0.1, 0.1
	s := NewSim(sc, time.Second, 42)
	var sum, sum2 float64
	const n = 4000
	for range n {
		smp, _ := s.Next()
		v := smp.Values[0]
		if q := v * 10; math.Abs(q-math.Round(q)) > 1e-9 {
			t.Fatalf("value %v is not a multiple of 0.1", v)
		}
		sum += v - 20
		sum2 += (v - 20) * (v - 20)
	}
	mean, sd := sum/n, math.Sqrt(sum2/n-(sum/n)*(sum/n))
	// Quantising N(0, 0.1) to 0.1 steps adds variance 0.1²/12 (Sheppard's correction).
	wantSD := math.Sqrt(0.01 + 0.01/12)
	if math.Abs(mean) > 0.01 || math.Abs(sd-wantSD) > 0.01 {
		t.Errorf("noise mean %.4f sd %.4f, want 0 and %.4f", mean, sd, wantSD)
	}
	a := runLines(t, NewSim(DemoScenario(), 0, 3), Options{Duration: time.Minute})
	b := runLines(t, NewSim(DemoScenario(), 0, 3), Options{Duration: time.Minute})
	c := runLines(t, NewSim(DemoScenario(), 0, 4), Options{Duration: time.Minute})
	if strings.Join(a, "\n") != strings.Join(b, "\n") || strings.Join(a, "\n") == strings.Join(c, "\n") {
		t.Error("equal seeds must give equal output and different seeds different output")
	}
}

func TestReplayEmitsEmptyFields(t *testing.T) {
	r, err := OpenReplay(filepath.Join("..", "..", "..", "..", "testdata", "daq", "replay-small.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	got := runLines(t, r, Options{})
	want := []string{"# t_s,replay,replay-ambient", "0.0,98.2,22.0", "60.0,94.4,", "120.0,,22.1", "180.0,89.1,22.1", "240.0,87.0,22.0"}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("replay output:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	cfg := r.DemoConfig("/dev/null")
	p, err := daq.NewLineParser("rack2", cfg.Loggers[0].Line)
	if err != nil {
		t.Fatal(err)
	}
	rs, err := p.Parse([]byte(got[3]), time.Now())
	if err != nil || rs[0].Status != daq.StatusUnparsable || rs[0].Raw != "" || rs[1].Celsius != 22.1 {
		t.Errorf("missing cell parsed as %+v, %v; want an unparsable empty reading then 22.1", rs, err)
	}
}

func TestReplayErrors(t *testing.T) {
	tests := []struct{ csv, want string }{
		{"t_s,temp_c\n0,1\n", `replay x.csv: header "t_s,temp_c": no column "ambient_c" (want t_s,temp_c,ambient_c)`},
		{"t_s,temp_c,ambient_c\nzero,1,2\n", `replay x.csv:2: t_s "zero" is not a number of seconds`},
		{"t_s,temp_c,ambient_c\n0,1,2\n1,hot,2\n", `replay x.csv:3: temp_c: "hot" is not a temperature`},
	}
	for _, tc := range tests {
		r, err := NewReplay(strings.NewReader(tc.csv), "x.csv")
		if err == nil {
			for err == nil {
				_, err = r.Next()
			}
		}
		if err == nil || err.Error() != tc.want {
			t.Errorf("csv %q: err = %v, want %q", tc.csv, err, tc.want)
		}
	}
}

// fakeClock records the waits Run asks for and advances time by them.
type fakeClock struct {
	t     time.Time
	waits []time.Duration
}

func (c *fakeClock) now() time.Time { return c.t }
func (c *fakeClock) sleep(_ context.Context, d time.Duration) error {
	c.waits = append(c.waits, d)
	c.t = c.t.Add(max(d, 0))
	return nil
}

// Pacing follows the logger clock divided by the speed, including uneven gaps and a
// clock that restarts.
func TestPacingUsesLoggerClock(t *testing.T) {
	csv := "t_s,temp_c,ambient_c\n100,50,20\n102,49,20\n110,45,20\n5,44,20\n8,43,20\n"
	r, err := NewReplay(strings.NewReader(csv), "gaps.csv")
	if err != nil {
		t.Fatal(err)
	}
	clk := &fakeClock{t: time.Unix(0, 0)}
	var out bytes.Buffer
	if err := Run(context.Background(), &out, r, Options{Speed: 2, now: clk.now, sleep: clk.sleep}); err != nil {
		t.Fatal(err)
	}
	// Physical gaps 0, 2, 8, restart, 3 s at speed 2 → waits 0, 1, 4, 0, 1.5 s.
	want := []time.Duration{0, time.Second, 4 * time.Second, 0, 1500 * time.Millisecond}
	if len(clk.waits) != len(want) {
		t.Fatalf("waits = %v, want %v", clk.waits, want)
	}
	for i := range want {
		if clk.waits[i] != want[i] {
			t.Errorf("wait %d = %v, want %v", i, clk.waits[i], want[i])
		}
	}
	if n := strings.Count(out.String(), "\n"); n != 6 {
		t.Errorf("wrote %d lines, want header + 5", n)
	}
}

// Run stops cleanly when its context ends, even while pacing an endless simulation.
func TestRunStopsOnCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	var buf bytes.Buffer
	go func() { done <- Run(ctx, &buf, NewSim(DemoScenario(), 0, 1), Options{Speed: 1}) }()
	cancel()
	select {
	case err := <-done:
		if err != nil {
			t.Errorf("Run after cancel = %v, want nil", err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("Run did not stop after cancel")
	}
}

// The simulator on its own pseudo-terminal is read by the line source end to end.
func TestPTYEndToEnd(t *testing.T) {
	p, err := OpenPTY()
	if err != nil {
		t.Skipf("no pseudo-terminal: %v", err)
	}
	defer p.Close()
	sc := DemoScenario()
	cfg := sc.DemoConfig(p.Path())
	src, err := daq.NewLineSource(cfg.Loggers[0].Logger, nil)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan daq.Reading, 64)
	go src.Run(ctx, out)
	deadline := time.Now().Add(10 * time.Second)
	for !src.Stats().Up {
		if time.Now().After(deadline) {
			t.Fatal("line source never opened the pseudo-terminal")
		}
		time.Sleep(10 * time.Millisecond)
	}
	go Run(ctx, p, NewSim(sc, DefaultInterval, 1), Options{Speed: 600})
	seen := map[string]bool{}
	for len(seen) < 5 {
		select {
		case r := <-out:
			if !r.OK() {
				t.Fatalf("reading %+v not ok", r)
			}
			seen[r.Channel] = true
		case <-time.After(10 * time.Second):
			t.Fatalf("only channels %v arrived", seen)
		}
	}
}

// With nobody reading, writes never block: stale bytes are dropped.
func TestPTYWithoutReaderDoesNotBlock(t *testing.T) {
	p, err := OpenPTY()
	if err != nil {
		t.Skipf("no pseudo-terminal: %v", err)
	}
	defer p.Close()
	line := bytes.Repeat([]byte("x"), 99)
	line = append(line, '\n')
	for range 200 { // 20 kB, five times the terminal buffer
		if _, err := p.Write(line); err != nil {
			t.Fatal(err)
		}
	}
	if p.Dropped() == 0 {
		t.Error("nothing was dropped although nobody read 20 kB")
	}
}

func TestDemoConfig(t *testing.T) {
	cfg := DemoScenario().DemoConfig("/dev/pts/9")
	lg := cfg.Loggers[0]
	if lg.Name != "rack2" || lg.Port != "/dev/pts/9" || lg.Format != "line" || lg.Line.ClockColumn != 1 || lg.Line.Separator != "," {
		t.Errorf("logger = %+v", lg)
	}
	if cfg.Listen != "127.0.0.1:8391" || cfg.DataDir != "" || len(cfg.Channels) != 5 {
		t.Errorf("listen %q data_dir %q, %d channels; want placeholder listen, empty data dir, 5 channels", cfg.Listen, cfg.DataDir, len(cfg.Channels))
	}
	for _, ch := range cfg.Channels[:4] {
		if ch.Ambient != "rack2-ambient" || len(ch.Targets) != 2 ||
			!ch.Targets[0].Handling || *ch.Targets[0].Celsius != 50 || *ch.Targets[1].Within != 2 {
			t.Errorf("channel %+v: want ambient rack2-ambient, handling 50 °C, settled within 2", ch)
		}
	}
}
