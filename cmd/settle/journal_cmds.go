package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/exporter/report"
	"github.com/settle-lab/settle/predict"
)

func init() {
	subcommands = append(subcommands, newExportCmd, newReportCmd, newRunsCmd, newRunStartCmd, newRunStopCmd)
}

// journalDataDir resolves --data-dir, then SETTLE_DATA_DIR.
func journalDataDir(flag string) (string, error) {
	if flag != "" {
		return flag, nil
	}
	if env := os.Getenv("SETTLE_DATA_DIR"); env != "" {
		return env, nil
	}
	return "", errors.New("give --data-dir DIR or set SETTLE_DATA_DIR (the daemon's data_dir)")
}

// openJournalRO opens the journal in a data directory read-only; it is safe while the
// daemon writes it.
func openJournalRO(dirFlag string) (*journal.Journal, error) {
	dir, err := journalDataDir(dirFlag)
	if err != nil {
		return nil, err
	}
	return journal.Open(dir, journal.Options{ReadOnly: true})
}

// journalTimeLayouts are the accepted --from/--to forms; those without a zone are
// local time.
var journalTimeLayouts = []string{time.RFC3339Nano, "2006-01-02T15:04:05", "2006-01-02T15:04", "2006-01-02 15:04:05", "2006-01-02 15:04", "2006-01-02"}

// parseJournalTime reads a --from/--to value; empty is the zero time (open end).
func parseJournalTime(flag, s string) (time.Time, error) {
	if s == "" {
		return time.Time{}, nil
	}
	for _, l := range journalTimeLayouts {
		if t, err := time.ParseInLocation(l, s, time.Local); err == nil {
			return t, nil
		}
	}
	return time.Time{}, fmt.Errorf("--%s %q: want an ISO 8601 time such as 2026-03-14T09:30:00Z, 2026-03-14 09:30 (local) or 2026-03-14", flag, s)
}

func newExportCmd() *cobra.Command {
	var dataDir, channel, from, to, out string
	cmd := &cobra.Command{
		Use:   "export --channel C [--from T] [--to T] [--out FILE]",
		Short: "Write a channel's recorded readings as CSV a spreadsheet opens as is",
		Long: `Write the readings of one channel from the journal as CSV: a header row, comma
separated, '.' as decimal point, ISO 8601 UTC times, seconds since the first reading,
°C (empty for a fault) and the reading's status. --from is inclusive, --to exclusive;
times without a zone are local. It reads the journal read-only, so it is safe while the
daemon runs.`,
		Example: "  settle export --data-dir /var/lib/settle --channel rack-3 --from 2026-03-14 --to 2026-03-15 --out rack-3.csv",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			f, err := parseJournalTime("from", from)
			if err != nil {
				return err
			}
			t, err := parseJournalTime("to", to)
			if err != nil {
				return err
			}
			return runExport(cmd.OutOrStdout(), cmd.ErrOrStderr(), dataDir, channel, f, t, out)
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&dataDir, "data-dir", "", "the daemon's data directory (default $SETTLE_DATA_DIR)")
	fl.StringVar(&channel, "channel", "", "channel name (required)")
	fl.StringVar(&from, "from", "", "first time, inclusive (default: the first reading)")
	fl.StringVar(&to, "to", "", "last time, exclusive (default: the last reading)")
	fl.StringVar(&out, "out", "", "output file (default: standard output)")
	_ = cmd.MarkFlagRequired("channel")
	return cmd
}

func runExport(stdout, stderr io.Writer, dataDir, channel string, from, to time.Time, out string) error {
	j, err := openJournalRO(dataDir)
	if err != nil {
		return err
	}
	defer j.Close()
	var buf bytes.Buffer
	n, err := report.WriteCSV(&buf, j.Readings(channel, from, to), time.Time{})
	if err != nil {
		return fmt.Errorf("export %s: %w", channel, err)
	}
	if n == 0 {
		fmt.Fprintf(stderr, "settle export: no readings of channel %q in that span\n", channel)
	}
	if out == "" {
		_, err = stdout.Write(buf.Bytes())
		return err
	}
	if err := os.WriteFile(out, buf.Bytes(), 0o640); err != nil {
		return fmt.Errorf("export %s: %w", channel, err)
	}
	fmt.Fprintf(stderr, "settle export: %d readings of %s written to %s\n", n, channel, out)
	return nil
}

func newReportCmd() *cobra.Command {
	var dataDir, out string
	cmd := &cobra.Command{
		Use:   "report RUN [--out DIR]",
		Short: "Write a run's report: readings CSV, JSON summary and PNG figure",
		Long: `Write the report of a recorded run from the journal: RUN-readings.csv, RUN-summary.json
(specimen, model, fitted parameters, h, Biot number, each target's observed crossing and
how the forecast converged) and RUN.png. The model is refitted from the recorded
readings. The journal is opened read-only, so this is safe while the daemon runs.
'settle runs' lists run ids.

Forecasts are estimates. Before handling a specimen, verify its temperature with a
contact thermometer and follow your lab's rules.`,
		Example: "  settle report 20260314T090000Z-rack-3 --data-dir /var/lib/settle --out reports/",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runReport(cmd.OutOrStdout(), dataDir, args[0], out)
		},
	}
	cmd.Flags().StringVar(&dataDir, "data-dir", "", "the daemon's data directory (default $SETTLE_DATA_DIR)")
	cmd.Flags().StringVar(&out, "out", ".", "folder for the report files")
	return cmd
}

func runReport(stdout io.Writer, dataDir, runID, out string) error {
	j, err := openJournalRO(dataDir)
	if err != nil {
		return err
	}
	defer j.Close()
	run, err := j.Run(runID)
	if err != nil {
		return err
	}
	fc, err := report.Refit(j, run, predict.TrackerOptions{})
	if err != nil {
		return err
	}
	p, err := report.Write(out, j, runID, fc)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%s\n%s\n%s\n", p.CSV, p.JSON, p.PNG)
	return nil
}

func newRunsCmd() *cobra.Command {
	var dataDir, channel string
	var active bool
	cmd := &cobra.Command{
		Use:   "runs [--channel C] [--active]",
		Short: "List recorded runs, newest first",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			j, err := openJournalRO(dataDir)
			if err != nil {
				return err
			}
			defer j.Close()
			runs, err := j.Runs(journal.RunFilter{Channel: channel, ActiveOnly: active})
			if err != nil {
				return err
			}
			w := cmd.OutOrStdout()
			for _, r := range runs {
				stop := "active"
				if !r.Active() {
					stop = r.Stopped.Format(time.RFC3339)
				}
				fmt.Fprintf(w, "%s\t%s\t%s\t%s\t%s\n", r.ID, r.Channel, r.Specimen, r.Started.Format(time.RFC3339), stop)
			}
			return nil
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&dataDir, "data-dir", "", "the daemon's data directory (default $SETTLE_DATA_DIR)")
	fl.StringVar(&channel, "channel", "", "only this channel")
	fl.BoolVar(&active, "active", false, "only active runs")
	return cmd
}

// daemonClient talks to a running daemon's runs API.
type daemonClient struct {
	addr, token string
	http        *http.Client
}

func newDaemonClient(addr, token string) (*daemonClient, error) {
	if token == "" {
		token = os.Getenv("SETTLE_TOKEN")
	}
	if token == "" {
		return nil, errors.New("give --token or set SETTLE_TOKEN (the daemon's API token)")
	}
	if !strings.Contains(addr, "://") {
		addr = "http://" + addr
	}
	if _, err := url.Parse(addr); err != nil {
		return nil, fmt.Errorf("--addr %q: %w", addr, err)
	}
	return &daemonClient{addr: strings.TrimRight(addr, "/"), token: token, http: &http.Client{Timeout: 15 * time.Second}}, nil
}

// call sends a request and decodes a JSON reply into out, turning an API error into
// a Go error that names the daemon.
func (c *daemonClient) call(ctx context.Context, method, path string, body, out any) error {
	var rd io.Reader
	if body != nil {
		b, err := json.Marshal(body)
		if err != nil {
			return err
		}
		rd = bytes.NewReader(b)
	}
	req, err := http.NewRequestWithContext(ctx, method, c.addr+path, rd)
	if err != nil {
		return fmt.Errorf("daemon at %s: %w", c.addr, err)
	}
	req.Header.Set("Authorization", "Bearer "+c.token)
	req.Header.Set("Content-Type", "application/json")
	resp, err := c.http.Do(req)
	if err != nil {
		return fmt.Errorf("daemon at %s: %w (is `settle run` running there?)", c.addr, err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(io.LimitReader(resp.Body, 1<<20))
	if err != nil {
		return fmt.Errorf("daemon at %s: %w", c.addr, err)
	}
	if resp.StatusCode >= 300 {
		var e struct{ Error string }
		if json.Unmarshal(b, &e) == nil && e.Error != "" {
			return fmt.Errorf("daemon at %s: %s (HTTP %d)", c.addr, e.Error, resp.StatusCode)
		}
		return fmt.Errorf("daemon at %s: HTTP %d", c.addr, resp.StatusCode)
	}
	if err := json.Unmarshal(b, out); err != nil {
		return fmt.Errorf("daemon at %s: reply: %w", c.addr, err)
	}
	return nil
}

func newRunStartCmd() *cobra.Command {
	var addr, token, specFile, targets string
	var spec journal.RunSpec
	cmd := &cobra.Command{
		Use:   "run-start --channel C --specimen ID [--description TEXT] [--specimen-file FILE] [--targets JSON]",
		Short: "Tell the running daemon that a specimen is on a channel (start a run)",
		Long: `Start a run on the running daemon: from now, the channel's readings, forecasts and
target crossings belong to the specimen. --specimen-file is the specimen description
(the YAML 'settle fit --specimen' reads: shape, size_m, length_m, sensor, material)
stored with the run and used by reports; --targets a JSON array such
as [{"name":"handle","celsius":45,"handling":true},{"name":"settled","within":2}]
(default: the channel's configured targets). Needs the daemon's API token (--token or
SETTLE_TOKEN).`,
		Example: "  settle run-start --channel rack-3 --specimen S-2026-041 --description 'quenched bar'",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			if specFile != "" {
				if _, err := predict.LoadSpecimen(specFile); err != nil {
					return fmt.Errorf("--specimen-file: %w", err)
				}
				b, err := os.ReadFile(specFile)
				if err != nil {
					return fmt.Errorf("--specimen-file: %w", err)
				}
				spec.SpecimenSpec = string(b)
			}
			if targets != "" {
				if _, err := report.ParseTargets([]byte(targets)); err != nil {
					return fmt.Errorf("--targets: %w", err)
				}
				spec.Targets = json.RawMessage(targets)
			}
			c, err := newDaemonClient(addr, token)
			if err != nil {
				return err
			}
			spec.Origin = "cli"
			var run journal.Run
			if err := c.call(cmd.Context(), http.MethodPost, "/api/v1/runs", spec, &run); err != nil {
				return err
			}
			fmt.Fprintf(cmd.OutOrStdout(), "started run %s: specimen %s on %s\n", run.ID, run.Specimen, run.Channel)
			return nil
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&spec.Channel, "channel", "", "channel the specimen is on (required)")
	fl.StringVar(&spec.Specimen, "specimen", "", "specimen id (required)")
	fl.StringVar(&spec.Description, "description", "", "free text")
	fl.StringVar(&specFile, "specimen-file", "", "specimen description file (YAML, as for settle fit --specimen)")
	fl.StringVar(&targets, "targets", "", "targets as a JSON array")
	addDaemonFlags(cmd, &addr, &token)
	_ = cmd.MarkFlagRequired("channel")
	_ = cmd.MarkFlagRequired("specimen")
	return cmd
}

func newRunStopCmd() *cobra.Command {
	var addr, token, channel, runID string
	cmd := &cobra.Command{
		Use:   "run-stop (--channel C | --run ID)",
		Short: "Tell the running daemon that a run has ended (specimen removed)",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			if (channel == "") == (runID == "") {
				return errors.New("run-stop: give exactly one of --channel C or --run ID")
			}
			c, err := newDaemonClient(addr, token)
			if err != nil {
				return err
			}
			if runID == "" {
				var list struct{ Runs []journal.Run }
				if err := c.call(cmd.Context(), http.MethodGet, "/api/v1/runs?active=true&channel="+url.QueryEscape(channel), nil, &list); err != nil {
					return err
				}
				if len(list.Runs) == 0 {
					return fmt.Errorf("run-stop: no active run on channel %s", channel)
				}
				runID = list.Runs[0].ID
			}
			var run journal.Run
			if err := c.call(cmd.Context(), http.MethodPost, "/api/v1/runs/"+url.PathEscape(runID)+"/stop", struct{}{}, &run); err != nil {
				return err
			}
			fmt.Fprintf(cmd.OutOrStdout(), "stopped run %s (%s on %s)\n", run.ID, run.Specimen, run.Channel)
			return nil
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&channel, "channel", "", "stop the active run of this channel")
	fl.StringVar(&runID, "run", "", "stop this run")
	addDaemonFlags(cmd, &addr, &token)
	return cmd
}

func addDaemonFlags(cmd *cobra.Command, addr, token *string) {
	cmd.Flags().StringVar(addr, "addr", defaultListen, "the daemon's HTTP address")
	cmd.Flags().StringVar(token, "token", "", "the daemon's API token (default $SETTLE_TOKEN)")
}
