package main

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"os/signal"
	"syscall"
	"time"

	"github.com/spf13/cobra"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/exporter"
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

SIGINT and SIGTERM stop it cleanly. SIGHUP reloads the configuration file: a valid
one restarts the loggers and trackers in-process (forecasts resume from the journal); an
invalid one is logged and the running configuration stays. The listen address defaults to ` + defaultListen + `
(loopback only); SETTLE_LISTEN and SETTLE_DATA_DIR override the configuration file.`,
		Example: "  settle run --demo\n  settle run --config /etc/settle/settle.yaml --listen 0.0.0.0:8391",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			ctx, stop := signal.NotifyContext(cmd.Context(), os.Interrupt, syscall.SIGTERM)
			defer stop()
			reload := make(chan os.Signal, 1)
			signal.Notify(reload, syscall.SIGHUP)
			defer signal.Stop(reload)
			return runDaemon(ctx, f, cmd.Flags().Changed("listen"), reload)
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

func runDaemon(ctx context.Context, f runFlags, listenSet bool, reload <-chan os.Signal) error {
	log, err := newLogger(f.logLevel)
	if err != nil {
		return err
	}
	if f.demo == (f.configPath != "") {
		return errors.New("run: give exactly one of --config FILE or --demo")
	}
	load := func() (*config.Config, error) {
		cfg, err := config.Load(f.configPath)
		if err == nil {
			f.applyOverrides(cfg, listenSet)
		}
		return cfg, err
	}
	var cfg *config.Config
	if f.demo {
		var stopSim func()
		if cfg, stopSim, err = startDemo(ctx, log); err != nil {
			return err
		}
		defer stopSim()
		cleanup, err := f.demoDataDir(cfg, log)
		if err != nil {
			return err
		}
		defer cleanup()
		f.applyOverrides(cfg, listenSet)
		load = nil // the demo has no file to reload
	} else if cfg, err = load(); err != nil {
		return err
	}
	return serveReloading(ctx, cfg, log, reload, load)
}

// applyOverrides applies --listen (when given, or when the file has none) and --data-dir.
func (f runFlags) applyOverrides(cfg *config.Config, listenSet bool) {
	if listenSet || cfg.Listen == "" {
		cfg.Listen = f.listen
	}
	if f.dataDir != "" {
		cfg.DataDir = f.dataDir
	}
}

// demoDataDir gives the demo a journal folder of its own unless --data-dir or
// SETTLE_DATA_DIR names one, and logs where it is. cleanup removes a temporary folder
// (on a clean exit; a killed demo leaves it in the temporary directory) and says so.
func (f *runFlags) demoDataDir(cfg *config.Config, log *slog.Logger) (cleanup func(), err error) {
	cleanup = func() {}
	if f.dataDir == "" {
		f.dataDir = os.Getenv(config.EnvDataDir)
	}
	if f.dataDir == "" {
		dir, err := os.MkdirTemp("", "settle-demo-")
		if err != nil {
			return nil, fmt.Errorf("demo data folder: %w", err)
		}
		f.dataDir = dir
		cleanup = func() {
			if err := os.RemoveAll(dir); err != nil {
				log.Warn("demo: temporary journal folder not removed", "data_dir", dir, "err", err)
				return
			}
			log.Info("demo: temporary journal folder removed", "data_dir", dir)
		}
		log.Info("demo: journal in a temporary folder, removed on a clean exit (give --data-dir to keep it)", "data_dir", dir)
	} else {
		log.Info("demo: journal in the folder given", "data_dir", f.dataDir)
	}
	cfg.DataDir = f.dataDir
	return cleanup, nil
}

// serveReloading runs a daemon on cfg until ctx ends. On a signal from reload it loads
// the configuration again; a valid one replaces the running daemon (ports closed and
// reopened, the journal flushed and reopened, forecasts resumed from it), an invalid one
// is logged and the running daemon goes on untouched. load is nil when there is nothing
// to reload. Each outcome is exported (exporter.ConfigReloads).
func serveReloading(ctx context.Context, cfg *config.Config, log *slog.Logger, reload <-chan os.Signal, load func() (*config.Config, error)) error {
	var prev *config.Config // the configuration that last ran, to fall back on
	reloads := exporter.NewConfigReloads(time.Now())
	for {
		d, err := newDaemon(cfg, log)
		if err != nil && prev != nil {
			// A valid file that cannot start (its port is taken, say): keep serving.
			log.Error("reloaded configuration cannot start: going back to the previous one", "err", err)
			reloads.Failed()
			cfg, prev = prev, nil
			continue
		}
		if err != nil {
			return err
		}
		if prev != nil {
			reloads.Succeeded(time.Now())
		}
		d.metrics.MustRegister(reloads)
		runCtx, stop := context.WithCancel(ctx)
		next := make(chan *config.Config, 1)
		go func() { next <- awaitReload(runCtx, reload, load, log, reloads); stop() }()
		err = d.Run(runCtx)
		stop()
		newCfg := <-next
		if newCfg == nil || ctx.Err() != nil {
			return err
		}
		log.Info("configuration reloaded: restarting loggers and trackers")
		cfg, prev = newCfg, cfg
	}
}

// awaitReload waits for a reload signal with a valid configuration and returns it, or
// nil when ctx ends first. A refused file is recorded in reloads.
func awaitReload(ctx context.Context, reload <-chan os.Signal, load func() (*config.Config, error), log *slog.Logger,
	reloads *exporter.ConfigReloads) *config.Config {
	for {
		select {
		case <-ctx.Done():
			return nil
		case <-reload:
			if load == nil {
				log.Warn("reload requested, but the demo has no configuration file to reload")
				continue
			}
			cfg, err := load()
			if err != nil {
				log.Error("reload refused: the running configuration stays", "err", err)
				reloads.Failed()
				continue
			}
			return cfg
		}
	}
}

func newLogger(level string) (*slog.Logger, error) {
	var l slog.Level
	if err := l.UnmarshalText([]byte(level)); err != nil {
		return nil, fmt.Errorf("--log-level %q: want debug, info, warn or error", level)
	}
	return slog.New(slog.NewTextHandler(os.Stderr, &slog.HandlerOptions{Level: l})), nil
}
