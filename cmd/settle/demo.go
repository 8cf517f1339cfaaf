package main

import (
	"context"
	"errors"
	"log/slog"
	"sync"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
	"github.com/settle-lab/settle/config"
)

// startDemo serves the built-in simulated rack on a new pseudo-terminal and returns a
// configuration that reads it through the ordinary serial path, exactly as a real
// logger would be read. stop ends the simulator and closes the pseudo-terminal.
func startDemo(ctx context.Context, log *slog.Logger) (cfg *config.Config, stop func(), err error) {
	p, err := sim.OpenPTY()
	if err != nil {
		return nil, nil, err
	}
	sc := sim.DemoScenario()
	c := sc.DemoConfig(p.Path())
	c.Display.TimeLapse = sim.DemoSpeed
	simCtx, cancel := context.WithCancel(ctx)
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		src := sim.NewSim(sc, sim.DefaultInterval, 1)
		err := sim.Run(simCtx, p, src, sim.Options{Speed: sim.DemoSpeed})
		if err != nil && !errors.Is(err, context.Canceled) {
			log.Error("demo simulator stopped", "err", err)
		}
	}()
	log.Info("demo: simulated rack on a pseudo-terminal", "port", p.Path(), "speed", sim.DemoSpeed)
	return &c, func() { cancel(); wg.Wait(); p.Close() }, nil
}
