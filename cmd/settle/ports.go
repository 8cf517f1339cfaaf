package main

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"
	"go.bug.st/serial/enumerator"
)

func init() { subcommands = append(subcommands, newPortsCmd) }

// byIDDir holds udev's stable links to serial devices, named after the USB vendor,
// product, serial number and interface.
const byIDDir = "/dev/serial/by-id"

func newPortsCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "ports",
		Short: "List serial ports with their USB vendor, product and serial number",
		Long: `List the serial ports of this host once, with USB vendor and product ids, the
maker's product name and serial number, and the stable /dev/serial/by-id/… link of each.

Put the by-id link in the configuration (loggers[].port): /dev/ttyUSB0 can become
/dev/ttyUSB1 when adapters are replugged or the host restarts, the by-id link stays
the same for the same adapter. settle follows the link each time it reopens a port.

USB details come from sysfs, without opening the ports. go.bug.st/serial's enumerator
does open built-in /dev/ttyS* ports briefly to tell real ones from placeholders, so a
built-in port held by another program may be missing from the list.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			ports, err := enumerator.GetDetailedPortsList()
			if err != nil {
				return fmt.Errorf("ports: list serial ports: %w", err)
			}
			links, err := byIDLinks(byIDDir)
			if err != nil {
				return fmt.Errorf("ports: %w", err)
			}
			return writePorts(cmd.OutOrStdout(), ports, links)
		},
	}
}

// byIDLinks maps each device a link in dir points to (e.g. /dev/ttyUSB0) to the
// links' paths. A missing dir (no USB serial adapter plugged in) gives an empty map.
func byIDLinks(dir string) (map[string][]string, error) {
	entries, err := os.ReadDir(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return map[string][]string{}, nil
	}
	if err != nil {
		return nil, fmt.Errorf("read %s: %w", dir, err)
	}
	links := map[string][]string{}
	for _, e := range entries {
		path := filepath.Join(dir, e.Name())
		target, err := filepath.EvalSymlinks(path)
		if err != nil {
			continue // a dangling link: its adapter was just unplugged
		}
		links[target] = append(links[target], path)
	}
	return links, nil
}

// writePorts prints one row per port, sorted by name.
func writePorts(w io.Writer, ports []*enumerator.PortDetails, links map[string][]string) error {
	if len(ports) == 0 {
		_, err := fmt.Fprintln(w, "no serial ports found")
		return err
	}
	ports = slices.Clone(ports)
	slices.SortFunc(ports, func(a, b *enumerator.PortDetails) int { return strings.Compare(a.Name, b.Name) })
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "PORT\tUSB ID\tSERIAL\tPRODUCT\tSTABLE PATH")
	for _, p := range ports {
		id, product := "-", "-"
		if p.IsUSB {
			id = strings.ToLower(p.VID + ":" + p.PID)
			product = strings.TrimSpace(p.Manufacturer + " " + p.Product)
		}
		stable := "-"
		if l := links[p.Name]; len(l) > 0 {
			stable = strings.Join(l, " ")
		} else if p.IsUSB {
			stable = "(no by-id link; is udev running?)"
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\n", p.Name, id, dash(p.SerialNumber), dash(product), stable)
	}
	return tw.Flush()
}

func dash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}
