package main

import (
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/predict/material"
)

func init() { subcommands = append(subcommands, newConfigCmd) }

func newConfigCmd() *cobra.Command {
	cmd := &cobra.Command{
		Use:   "config",
		Short: "Check a configuration file or print an example",
		Long: `Work with settle's YAML configuration file.

  settle config example > settle.yaml   write a commented example to start from
  settle config check settle.yaml       report every problem, with its line and key path
  settle config materials               list the built-in specimen materials

Keys are case-insensitive: two keys of one section that differ only in case are an
error. Unknown keys are errors. SETTLE_LISTEN and SETTLE_DATA_DIR override listen and
data_dir (and SETTLE_TOKEN http.token); no other key has an environment override.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error { return cmd.Help() },
	}
	cmd.AddCommand(newConfigCheckCmd(), newConfigExampleCmd(), newConfigMaterialsCmd())
	return cmd
}

func newConfigCheckCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "check FILE",
		Short: "Validate a configuration file and report every problem",
		Long: `Check reads FILE as the daemon would (defaults, SETTLE_LISTEN and SETTLE_DATA_DIR
overrides, unknown keys rejected, validation), then looks at this computer without
opening any serial port: TLS files that cannot be read are errors; a serial port that
does not exist (yet) or cannot be opened by this user, and a listen port already in use,
are warnings, since the logger may be plugged in later.

Every problem is printed on its own line as "FILE: line N: KEY: what is wrong" (a
warning as "FILE: line N: warning: KEY: …"). With no errors it prints
"FILE: ok (N loggers, M channels, K targets)", with the number of warnings, and exits
0; otherwise it exits 1.`,
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

// checkConfig checks path and reports the result: every problem and warning on
// errOut, then a summary line on out, or an error that makes the exit code non-zero.
func checkConfig(out, errOut io.Writer, path string) error {
	c, problems := config.Check(path)
	for _, p := range problems {
		fmt.Fprintln(errOut, p.Error())
	}
	if c == nil {
		errs := 0
		for _, p := range problems {
			if !p.Warning {
				errs++
			}
		}
		return fmt.Errorf("%s: %s", path, plural(errs, "problem"))
	}
	targets := 0
	for _, ch := range c.Channels {
		targets += len(ch.Targets)
	}
	warned := ""
	if len(problems) > 0 {
		warned = ", " + plural(len(problems), "warning")
	}
	_, err := fmt.Fprintf(out, "%s: ok (%s, %s, %s)%s\n", path,
		plural(len(c.Loggers), "logger"), plural(len(c.Channels), "channel"), plural(targets, "target"), warned)
	return err
}

func newConfigMaterialsCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "materials",
		Short: "List the built-in specimen materials and their properties",
		Long: `Materials lists the materials a specimen's material.name can name, one per line, with
the properties a name stands for (room temperature; each row's source is in
predict/material). Give the properties yourself for any other material, or to
override a named one: density_kg_m3, specific_heat_j_kgk, conductivity_w_mk, emissivity.`,
		Example: "  settle config materials",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			_, err := fmt.Fprintln(cmd.OutOrStdout(), material.List(""))
			return err
		},
	}
}

func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
