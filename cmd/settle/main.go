// Command settle reads thermocouple loggers, records every reading, fits a heat-transfer
// model to each specimen and forecasts when each reaches its targets. See `settle --help`.
package main

import (
	"fmt"
	"os"

	"github.com/spf13/cobra"
)

// subcommands holds the constructors of every subcommand. Each subcommand lives in a file
// of its own and appends its constructor in an init function, so that commands can be
// added without editing this file.
var subcommands []func() *cobra.Command

func main() { os.Exit(run(os.Args[1:])) }

// run executes the command line and returns the process exit code; deferred cleanup in
// the subcommands runs before main exits.
func run(args []string) int {
	root := newRootCmd()
	root.SetArgs(args)
	if err := root.Execute(); err != nil {
		fmt.Fprintln(os.Stderr, "settle:", err)
		return 1
	}
	return 0
}

func newRootCmd() *cobra.Command {
	root := &cobra.Command{
		Use:   "settle",
		Short: "Forecast when specimens on a rack reach their target temperatures",
		Long: `settle reads thermocouple data loggers on serial ports, records every reading,
fits a heat-transfer model to each specimen as the data arrives, and forecasts when each
specimen reaches its targets (safe to handle, at test temperature, settled near ambient),
with an interval. It serves Prometheus metrics, a JSON API and a status page.

Forecasts are estimates. Before handling a hot specimen, verify its temperature with a
contact thermometer, wear protective gloves, remember that the core lags the surface,
and follow your lab's rules and local regulations.`,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	for _, newCmd := range subcommands {
		root.AddCommand(newCmd())
	}
	return root
}
