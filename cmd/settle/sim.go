package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"
	"time"

	"github.com/spf13/cobra"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
)

func init() { subcommands = append(subcommands, newSimCmd) }

type simFlags struct {
	pty      bool
	link     string
	speed    float64
	interval time.Duration
	seed     uint64
	replay   string
	duration time.Duration
}

func newSimCmd() *cobra.Command {
	var f simFlags
	cmd := &cobra.Command{
		Use:   "sim [--pty [--link PATH]] [--replay FILE.csv]",
		Short: "Simulate a logger on a cooling rack (stdout or a pseudo-terminal)",
		Long: `Simulate a thermocouple logger so settle can be tried without hardware.

The built-in rack ("rack 2 after the afternoon furnace and oven batches", invented) holds
a carbon-steel cylinder from the hardening furnace (850 °C), a brass sphere from the
annealing furnace (450 °C), an aluminium-alloy plate from the ageing oven (200 °C), an
alumina tile from the curing oven (80 °C) and an ambient sensor. Each cools by natural
convection and radiation with a temperature-dependent surface coefficient; readings have
about 0.1 °C of noise and 0.1 °C resolution.

Each line is "<logger clock s>,<T1>,...,<ambient>" after a '#' header naming the
columns; the clock is physical time, so a time-lapse run keeps true times. --speed is
the time-lapse factor (physical seconds per wall second; 0 writes as fast as possible).
At the default speed one wall minute is one physical hour.

With --replay the lines come from a recorded CSV (header t_s,temp_c,ambient_c; an empty
cell is a missing reading and is sent as an empty field), paced the same way.

With --pty the simulator serves a new pseudo-terminal: its device path is printed on
stdout and a reader opens it like a serial port (format "line", clock_column 1, the
columns in header order). --link makes a stable symlink to it.

SIGINT or SIGTERM stops it cleanly.`,
		Example: `  settle sim --duration 10m --speed 0 > rack2.txt
  settle sim --pty --link /tmp/rack2-tty
  settle sim --replay cooling.csv --speed 30`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			ctx, stop := signal.NotifyContext(cmd.Context(), os.Interrupt, syscall.SIGTERM)
			defer stop()
			return runSim(ctx, cmd.OutOrStdout(), f)
		},
	}
	fl := cmd.Flags()
	fl.BoolVar(&f.pty, "pty", false, "serve on a new pseudo-terminal and print its path instead of writing to stdout")
	fl.StringVar(&f.link, "link", "", "with --pty: make a symlink at this path to the pseudo-terminal")
	fl.Float64Var(&f.speed, "speed", sim.DemoSpeed, "time-lapse factor (physical seconds per wall second); 0 = as fast as possible")
	fl.DurationVar(&f.interval, "interval", sim.DefaultInterval, "physical time between readings (simulator only)")
	fl.Uint64Var(&f.seed, "seed", 1, "seed of the reading noise; equal seeds give equal runs")
	fl.StringVar(&f.replay, "replay", "", "stream a recorded CSV (t_s,temp_c,ambient_c) instead of simulating")
	fl.DurationVar(&f.duration, "duration", 0, "stop after this much physical time (0 = until stopped or the replay ends)")
	return cmd
}

func (f simFlags) check() error {
	switch {
	case f.speed < 0:
		return fmt.Errorf("sim: --speed %v: must be 0 (as fast as possible) or positive", f.speed)
	case f.interval <= 0:
		return fmt.Errorf("sim: --interval %v: must be positive", f.interval)
	case f.duration < 0:
		return fmt.Errorf("sim: --duration %v: must not be negative", f.duration)
	case f.link != "" && !f.pty:
		return errors.New("sim: --link needs --pty")
	}
	return nil
}

// runSim writes the simulated or replayed lines to stdout, or serves them on a
// pseudo-terminal whose path goes to stdout.
func runSim(ctx context.Context, stdout io.Writer, f simFlags) error {
	if err := f.check(); err != nil {
		return err
	}
	var src sim.Lines = sim.NewSim(sim.DemoScenario(), f.interval, f.seed)
	if f.replay != "" {
		r, err := sim.OpenReplay(f.replay)
		if err != nil {
			return fmt.Errorf("sim: %w", err)
		}
		defer r.Close()
		src = r
	}
	opt := sim.Options{Speed: f.speed, Duration: f.duration}
	if !f.pty {
		return sim.Run(ctx, stdout, src, opt)
	}
	p, err := sim.OpenPTY()
	if err != nil {
		return err
	}
	defer p.Close()
	if f.link != "" {
		if err := makeLink(f.link, p.Path()); err != nil {
			return err
		}
		defer os.Remove(f.link)
	}
	fmt.Fprintln(stdout, p.Path())
	return sim.Run(ctx, p, src, opt)
}

// makeLink points a symlink at target, replacing an older symlink but never a file.
func makeLink(link, target string) error {
	if fi, err := os.Lstat(link); err == nil {
		if fi.Mode()&os.ModeSymlink == 0 {
			return fmt.Errorf("sim: --link %s: exists and is not a symlink", link)
		}
		if err := os.Remove(link); err != nil {
			return fmt.Errorf("sim: --link %s: %w", link, err)
		}
	}
	if err := os.Symlink(target, link); err != nil {
		return fmt.Errorf("sim: --link: %w", err)
	}
	return nil
}
