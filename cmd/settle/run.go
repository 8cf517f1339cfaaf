package main

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"os/signal"
	"syscall"

	"github.com/spf13/cobra"

	"github.com/settle-lab/settle/config"
)

func init() { subcommands = append(subcommands, newRunCmd) }

// defaultListen is the daemon's default address (see config.DefaultListen).
const defaultListen = config.DefaultListen

type runFlags struct {
	configPath string
	demo       bool
	listen     string
	dataDir    string
	logLevel   string
}

func newRunCmd() *cobra.Command {
	var f runFlags
	cmd := &cobra.Command{
		Use:   "run (--config FILE | --demo)",
		Short: "Run the daemon: read loggers, fit, forecast, serve metrics and the API",
		Long: `Run the daemon. It reads every logger in the configuration, fits a model to each
channel and serves:

  /metrics          Prometheus metrics (settle_*)
  /api/v1/channels  the latest reading, fitted model and target forecasts (JSON)
  /healthz          liveness

With --demo it needs no hardware: a simulated rack of cooling specimens runs in-process
on a pseudo-terminal and is read through the same serial path as a real logger.

SIGINT and SIGTERM stop it cleanly. The listen address defaults to ` + defaultListen + `
(loopback only); SETTLE_LISTEN and SETTLE_DATA_DIR override the configuration file.`,
		Example: "  settle run --demo\n  settle run --config /etc/settle/settle.yaml --listen 0.0.0.0:8391",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			ctx, stop := signal.NotifyContext(cmd.Context(), os.Interrupt, syscall.SIGTERM)
			defer stop()
			return runDaemon(ctx, f, cmd.Flags().Changed("listen"))
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&f.configPath, "config", "", "configuration file (YAML)")
	fl.BoolVar(&f.demo, "demo", false, "run on the built-in simulated rack instead of a configuration")
	fl.StringVar(&f.listen, "listen", defaultListen, "HTTP listen address for metrics, API and status page")
	fl.StringVar(&f.dataDir, "data-dir", "", "folder for the journal (overrides data_dir)")
	fl.StringVar(&f.logLevel, "log-level", "info", "log level: debug, info, warn or error")
	return cmd
}

func runDaemon(ctx context.Context, f runFlags, listenSet bool) error {
	log, err := newLogger(f.logLevel)
	if err != nil {
		return err
	}
	if f.demo == (f.configPath != "") {
		return errors.New("run: give exactly one of --config FILE or --demo")
	}
	var cfg *config.Config
	if f.demo {
		var stopSim func()
		cfg, stopSim, err = startDemo(ctx, log)
		if err != nil {
			return err
		}
		defer stopSim()
	} else if cfg, err = config.Load(f.configPath); err != nil {
		return err
	}
	if listenSet || cfg.Listen == "" {
		cfg.Listen = f.listen
	}
	if f.dataDir == "" && f.demo {
		f.dataDir = os.Getenv(config.EnvDataDir)
	}
	if f.dataDir != "" {
		cfg.DataDir = f.dataDir
	} else if f.demo {
		if cfg.DataDir, err = os.MkdirTemp("", "settle-demo-"); err != nil {
			return fmt.Errorf("demo data folder: %w", err)
		}
		log.Info("demo: journal in a folder of its own", "data_dir", cfg.DataDir)
	}
	d, err := newDaemon(cfg, log)
	if err != nil {
		return err
	}
	return d.Run(ctx)
}

func newLogger(level string) (*slog.Logger, error) {
	var l slog.Level
	if err := l.UnmarshalText([]byte(level)); err != nil {
		return nil, fmt.Errorf("--log-level %q: want debug, info, warn or error", level)
	}
	return slog.New(slog.NewTextHandler(os.Stderr, &slog.HandlerOptions{Level: l})), nil
}
