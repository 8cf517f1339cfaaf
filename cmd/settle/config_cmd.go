package main

import (
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"github.com/settle-lab/settle/config"
)

func init() { subcommands = append(subcommands, newConfigCmd) }

func newConfigCmd() *cobra.Command {
	cmd := &cobra.Command{
		Use:   "config",
		Short: "Check a configuration file or print an example",
		Long: `Work with settle's YAML configuration file.

  settle config example > settle.yaml   write a commented example to start from
  settle config check settle.yaml       report every problem, with its key path

Keys are case-insensitive and unknown keys are errors. SETTLE_LISTEN and
SETTLE_DATA_DIR override listen and data_dir; no other key has an environment override.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error { return cmd.Help() },
	}
	cmd.AddCommand(newConfigCheckCmd(), newConfigExampleCmd())
	return cmd
}

func newConfigCheckCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "check FILE",
		Short: "Validate a configuration file and report every problem",
		Long: `Check reads FILE as the daemon would (defaults, SETTLE_LISTEN and SETTLE_DATA_DIR
overrides, unknown keys rejected, validation) without opening any serial port.

On success it prints "FILE: ok (N loggers, M channels, K targets)" and exits 0. Otherwise
it prints every problem, one per line as "FILE: KEY: what is wrong", and exits 1.`,
		Example: "  settle config check /etc/settle/settle.yaml",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return checkConfig(cmd.OutOrStdout(), cmd.ErrOrStderr(), args[0])
		},
	}
}

func newConfigExampleCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "example",
		Short: "Print a commented example configuration",
		Long: `Example prints a commented configuration for an invented bench (one logger, two
specimens and the room air) that passes "settle config check". Edit it to match yours.`,
		Example: "  settle config example > settle.yaml",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			_, err := io.WriteString(cmd.OutOrStdout(), config.Example)
			return err
		},
	}
}

// checkConfig loads path and reports the result: a summary line on out, or every
// problem on errOut and an error that makes the exit code non-zero.
func checkConfig(out, errOut io.Writer, path string) error {
	c, err := config.Load(path)
	if err != nil {
		problems := config.Problems(err)
		for _, p := range problems {
			fmt.Fprintln(errOut, p.Error())
		}
		return fmt.Errorf("%s: %s", path, plural(len(problems), "problem"))
	}
	targets := 0
	for _, ch := range c.Channels {
		targets += len(ch.Targets)
	}
	_, err = fmt.Fprintf(out, "%s: ok (%s, %s, %s)\n", path,
		plural(len(c.Loggers), "logger"), plural(len(c.Channels), "channel"), plural(targets, "target"))
	return err
}

func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
