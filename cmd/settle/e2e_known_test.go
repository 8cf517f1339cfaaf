package main

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
)

// knownCurve is a Newton-cooling curve with known parameters, sampled like a logger:
// 0.1 °C noise, 0.1 °C resolution, one reading every 2 s up to until seconds.
type knownCurve struct {
	ambient, excess, tau float64
}

func (k knownCurve) at(t float64) float64 { return k.ambient + k.excess*math.Exp(-t/k.tau) }

// crossing is the exact time the noise-free curve reaches celsius.
func (k knownCurve) crossing(celsius float64) float64 {
	return k.tau * math.Log(k.excess/(celsius-k.ambient))
}

func (k knownCurve) csv(until float64, seed uint64) string {
	rng := rand.New(rand.NewPCG(seed, 7))
	q := func(v float64) float64 { return math.Round(v*10) / 10 }
	var b strings.Builder
	b.WriteString("t_s,temp_c,ambient_c\n")
	for t := 0.0; t <= until; t += 2 {
		fmt.Fprintf(&b, "%g,%.1f,%.1f\n", t, q(k.at(t)+0.1*rng.NormFloat64()), q(k.ambient+0.05*rng.NormFloat64()))
	}
	return b.String()
}

// TestEndToEndKnownCurve streams a curve with known parameters through a real
// pseudo-terminal, go.bug.st/serial, the line driver, the tracker and an HTTP scrape,
// and checks the forecast crossing against the exact one.
func TestEndToEndKnownCurve(t *testing.T) {
	k := knownCurve{ambient: 22, excess: 180, tau: 900}
	const until = 600.0 // the forecast is made 600 s in; the true crossing is at 1675 s
	rep, err := sim.NewReplay(strings.NewReader(k.csv(until, 1)), "known.csv")
	if err != nil {
		t.Fatal(err)
	}
	p, err := sim.OpenPTY()
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	cfg := rep.DemoConfig(p.Path())
	base := startDaemon(t, &cfg)

	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	simDone := make(chan error, 1)
	go func() { simDone <- sim.Run(ctx, p, rep, sim.Options{Speed: 600}) }()

	last := `settle_reading_timestamp_seconds{channel="replay"}`
	fitted := `settle_fit_points{channel="replay"}`
	m := waitFor(t, base, 30*time.Second, func(m map[string]float64) bool {
		return m[fitted] >= 290 // 301 lines; the tracker refits every 10 s of reading time
	})
	if err := <-simDone; err != nil {
		t.Fatalf("replay: %v", err)
	}
	// The logger clock maps to wall time through an anchor: the newest reading (clock
	// 600 s or a little before) fixes it to within one 2 s sample.
	anchor := m[last] - until
	const target = sim.HandlingC
	want := anchor + k.crossing(target)
	label := fmt.Sprintf(`{channel="replay",target="%s"}`, "handling")
	eta, lo, hi := m["settle_target_eta_timestamp_seconds"+label],
		m["settle_target_eta_earliest_timestamp_seconds"+label], m["settle_target_eta_latest_timestamp_seconds"+label]
	if eta == 0 || lo == 0 || hi == 0 {
		t.Fatalf("no forecast for %s: eta %v [%v, %v]", label, eta, lo, hi)
	}
	// Tolerance: 3 % of the time still to go (1075 s), plus one sample of anchor error.
	tol := 0.03*(k.crossing(target)-until) + 2
	if math.Abs(eta-want) > tol {
		t.Errorf("eta = anchor%+.1f s, want anchor%+.1f s ± %.0f s", eta-anchor, want-anchor, tol)
	}
	if !(lo-2 <= want && want <= hi+2) {
		t.Errorf("interval [anchor%+.1f, anchor%+.1f] does not contain the true crossing anchor%+.1f",
			lo-anchor, hi-anchor, want-anchor)
	}
	if tau := m[`settle_fit_time_constant_seconds{channel="replay"}`]; math.Abs(tau-k.tau) > 0.03*k.tau {
		t.Errorf("fitted time constant %.1f s, want %.0f s ± 3 %%", tau, k.tau)
	}
	if up := m[`settle_port_up{logger="rack2"}`]; up != 1 {
		t.Errorf("settle_port_up = %v, want 1", up)
	}
	t.Logf("true crossing anchor+%.1f s; forecast anchor+%.1f s in [%.1f, %.1f]",
		want-anchor, eta-anchor, lo-anchor, hi-anchor)
}
