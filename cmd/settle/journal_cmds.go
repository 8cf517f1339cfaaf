package main

import (
	"bufio"
	"bytes"
	"context"
	"crypto/tls"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/spf13/cobra"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/daq/journal"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/report"
	"github.com/settle-lab/settle/runs"
)

func init() {
	subcommands = append(subcommands, newExportCmd, newReportCmd, newRunsCmd, newRunStartCmd, newRunStopCmd)
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
	var f cliFlags
	var channel, from, to, out string
	cmd := &cobra.Command{
		Use:   "export --channel C [--from T] [--to T] [--out FILE] [--config FILE]",
		Short: "Write a channel's recorded readings as CSV (settle fit reads it back)",
		Long: `Write the readings of one channel from the journal as CSV: a header row, comma
separated, '.' as decimal point, ISO 8601 UTC times, seconds since the first reading,
°C (empty for a fault) and the reading's status. A spreadsheet opens it as is, and
'settle fit' reads it back (it takes elapsed_s as the time and celsius as the
temperature). --from is inclusive, --to exclusive; times without a zone are local.

The data directory comes from --data-dir, else SETTLE_DATA_DIR, else data_dir in the
configuration (--config, else SETTLE_CONFIG, else ` + defaultConfigPath + ` if it exists).
It reads the journal read-only, so it is safe while the daemon runs. A channel the
record has never seen is an error that lists the known ones.`,
		Example: "  settle export --config /etc/settle/settle.yaml --channel rack-3 --from 2026-03-14 --to 2026-03-15 --out rack-3.csv",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			fr, err := parseJournalTime("from", from)
			if err != nil {
				return err
			}
			t, err := parseJournalTime("to", to)
			if err != nil {
				return err
			}
			if !fr.IsZero() && !t.IsZero() && !fr.Before(t) {
				return fmt.Errorf("export: --from %s is not before --to %s: the span holds no time (--to is exclusive)", from, to)
			}
			return runExport(cmd.OutOrStdout(), cmd.ErrOrStderr(), &f, channel, fr, t, out)
		},
	}
	fl := cmd.Flags()
	f.addRecordFlags(cmd)
	fl.StringVar(&channel, "channel", "", "channel name (required)")
	fl.StringVar(&from, "from", "", "first time, inclusive (default: the first reading)")
	fl.StringVar(&to, "to", "", "last time, exclusive (default: the last reading)")
	fl.StringVar(&out, "out", "", "output file (default: standard output)")
	_ = cmd.MarkFlagRequired("channel")
	return cmd
}

func runExport(stdout, stderr io.Writer, f *cliFlags, channel string, from, to time.Time, out string) error {
	j, c, err := f.openRecord()
	if err != nil {
		return err
	}
	defer j.Close()
	if err := checkChannel(j, c, channel); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	if out == "" {
		bw := bufio.NewWriterSize(stdout, 64<<10)
		n, err := report.WriteCSV(bw, j.Readings(channel, from, to), time.Time{})
		if err == nil {
			err = bw.Flush()
		}
		if err != nil {
			return fmt.Errorf("export %s: %w", channel, err)
		}
		if n == 0 {
			fmt.Fprintf(stderr, "settle export: no readings of channel %q in that span (the header only)\n", channel)
		}
		return nil
	}
	n, err := exportFile(out, func(w io.Writer) (int, error) {
		return report.WriteCSV(w, j.Readings(channel, from, to), time.Time{})
	})
	if err != nil {
		return fmt.Errorf("export %s: %w", channel, err)
	}
	if n == 0 {
		fmt.Fprintf(stderr, "settle export: no readings of channel %q in that span: %s holds the header only\n", channel, out)
		return nil
	}
	fmt.Fprintf(stderr, "settle export: %d readings of %s written to %s\n", n, channel, out)
	return nil
}

// exportFile streams write's output into a temporary file beside path and renames it
// to path once complete and synced, so a year of readings never sits in memory and an
// export that fails half-way (a full disk, a journal error) leaves no truncated file
// under the requested name (an existing file there is kept).
func exportFile(path string, write func(io.Writer) (int, error)) (n int, err error) {
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".*.partial")
	if err != nil {
		return 0, err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	bw := bufio.NewWriterSize(tmp, 64<<10)
	if n, err = write(bw); err != nil {
		return n, err
	}
	if err = bw.Flush(); err != nil {
		return n, err
	}
	mode := os.FileMode(0o640)
	if fi, err := os.Stat(path); err == nil && fi.Mode().IsRegular() {
		mode = fi.Mode().Perm() // replacing a file keeps its permissions
	}
	if err = tmp.Chmod(mode); err != nil {
		return n, err
	}
	if err = tmp.Sync(); err != nil {
		return n, err
	}
	if err = tmp.Close(); err != nil {
		return n, err
	}
	return n, os.Rename(tmp.Name(), path)
}

// knownChannels are the channels the record has readings of and those the
// configuration names, sorted.
func knownChannels(j *journal.Journal, c cliConfig) ([]string, error) {
	names, err := j.Channels()
	if err != nil {
		return nil, err
	}
	if c.cfg != nil {
		for _, ch := range c.cfg.Channels {
			names = append(names, ch.Name)
		}
	}
	slices.Sort(names)
	return slices.Compact(names), nil
}

// checkChannel refuses a channel that neither the record nor the configuration knows,
// listing the known ones.
func checkChannel(j *journal.Journal, c cliConfig, channel string) error {
	known, err := knownChannels(j, c)
	if err != nil || slices.Contains(known, channel) {
		return err
	}
	return fmt.Errorf("unknown channel %q: known channels: %s", channel, listKnown(known, 20))
}

func newReportCmd() *cobra.Command {
	var f cliFlags
	var out string
	cmd := &cobra.Command{
		Use:   "report RUN [--out DIR] [--config FILE]",
		Short: "Write a run's report: readings CSV, JSON summary and PNG figure",
		Long: `Write the report of a recorded run from the journal: RUN-readings.csv, RUN-summary.json
(specimen, model, fitted parameters, h, Biot number, each target's observed crossing and
how the forecast converged) and RUN.png.

The forecast is made as the daemon made it: the configuration's specimen and targets
for the channel, its measured ambient channel, and the readings up to the daemon's last
recorded forecast of the run (it records one whenever the forecast moves, and as the
run or the daemon stops), replayed through the daemon's engine. A report of a stopped
run therefore shows the figures the status page and the API showed when it stopped.
So give the daemon's configuration (--config, else SETTLE_CONFIG, else
` + defaultConfigPath + ` if it exists); without one the run is refitted with its own stored
targets and a fitted ambient, and the report says so.

The journal is opened read-only, so this is safe while the daemon runs. 'settle runs'
lists run ids; an unknown id is an error that lists the newest ones.

Forecasts are estimates. Before handling a specimen, verify its temperature with a
contact thermometer and follow your lab's rules.`,
		Example: "  settle report 20260314T090000Z-rack-3 --config /etc/settle/settle.yaml --out reports/",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runReport(cmd.OutOrStdout(), &f, args[0], out)
		},
	}
	f.addRecordFlags(cmd)
	cmd.Flags().StringVar(&out, "out", ".", "folder for the report files")
	return cmd
}

func runReport(stdout io.Writer, f *cliFlags, runID, out string) error {
	j, c, err := f.openRecord()
	if err != nil {
		return err
	}
	defer j.Close()
	run, err := findRun(j, runID)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	fc, err := reportForecast(j, c, run)
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

// reportForecast is the forecast of a report: the daemon's engine with the
// configuration, a refit without one.
func reportForecast(j *journal.Journal, c cliConfig, run journal.Run) (*predict.Forecast, error) {
	if c.cfg == nil {
		fc, err := runs.Refit(j, run, predict.TrackerOptions{})
		if fc != nil {
			fc.Notes = append(fc.Notes, "Made without the daemon's configuration (give --config): the daemon's figures may differ.")
		}
		return fc, err
	}
	specs, err := config.ChannelSpecs(c.cfg.Channels)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", c.path, err)
	}
	return runs.Engine{Specs: specs, Options: trackerOptions}.Forecast(j, run)
}

// findRun looks a run up; an unknown id is an error listing the newest runs.
func findRun(j *journal.Journal, id string) (journal.Run, error) {
	run, err := j.Run(id)
	if !errors.Is(err, journal.ErrNoRun) {
		return run, err
	}
	runs, lerr := j.Runs(journal.RunFilter{Limit: 11})
	if lerr != nil {
		return run, lerr
	}
	if len(runs) == 0 {
		return run, fmt.Errorf("unknown run %q: the record has no runs yet", id)
	}
	ids := make([]string, 0, len(runs))
	for _, r := range runs {
		ids = append(ids, r.ID)
	}
	more := ""
	if len(ids) > 10 {
		ids, more = ids[:10], "; settle runs lists them all"
	}
	return run, fmt.Errorf("unknown run %q: newest runs: %s%s", id, strings.Join(ids, ", "), more)
}

func newRunsCmd() *cobra.Command {
	var f cliFlags
	var channel, specimen string
	var active bool
	cmd := &cobra.Command{
		Use:   "runs [--channel C] [--specimen ID] [--active] [--config FILE]",
		Short: "List recorded runs, newest first",
		Long: `List the recorded runs, newest first, under a header: run id, channel, specimen,
start and stop (UTC). It prints "no runs yet" when there are none. An unknown channel
or specimen is an error that lists the known ones. The data directory is found as for
'settle export'.`,
		Example: "  settle runs --config /etc/settle/settle.yaml --channel rack-3",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			return runRuns(cmd.OutOrStdout(), &f, journal.RunFilter{Channel: channel, ActiveOnly: active}, specimen)
		},
	}
	fl := cmd.Flags()
	f.addRecordFlags(cmd)
	fl.StringVar(&channel, "channel", "", "only this channel")
	fl.StringVar(&specimen, "specimen", "", "only this specimen id")
	fl.BoolVar(&active, "active", false, "only active runs")
	return cmd
}

func runRuns(w io.Writer, f *cliFlags, filter journal.RunFilter, specimen string) error {
	j, c, err := f.openRecord()
	if err != nil {
		return err
	}
	defer j.Close()
	if filter.Channel != "" {
		if err := checkChannel(j, c, filter.Channel); err != nil {
			return fmt.Errorf("runs: %w", err)
		}
	}
	filter.Limit = 1 << 30
	runs, err := j.Runs(filter)
	if err != nil {
		return err
	}
	if specimen != "" {
		// The specimen is looked up among all runs: a known specimen whose runs the
		// other filters leave out is no match, not an unknown specimen.
		all, err := j.Runs(journal.RunFilter{Limit: 1 << 30})
		if err != nil {
			return err
		}
		if _, err := bySpecimen(all, specimen); err != nil {
			return fmt.Errorf("runs: %w", err)
		}
		runs = slices.DeleteFunc(runs, func(r journal.Run) bool { return r.Specimen != specimen })
	}
	if len(runs) == 0 {
		_, err := fmt.Fprintln(w, noRuns(filter, specimen))
		return err
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "RUN\tCHANNEL\tSPECIMEN\tSTARTED\tSTOPPED")
	for _, r := range runs {
		stop := "active"
		if !r.Active() {
			stop = r.Stopped.UTC().Format(time.RFC3339)
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\n", r.ID, r.Channel, r.Specimen, r.Started.UTC().Format(time.RFC3339), stop)
	}
	return tw.Flush()
}

// noRuns says that no run matched, in the words of the filters given.
func noRuns(filter journal.RunFilter, specimen string) string {
	msg := "no runs"
	if filter.ActiveOnly {
		msg = "no active runs"
	}
	if specimen != "" {
		msg += fmt.Sprintf(" of specimen %q", specimen)
	}
	if filter.Channel != "" {
		msg += " on channel " + filter.Channel
	}
	if msg == "no runs" {
		return "no runs yet"
	}
	return msg
}

// bySpecimen keeps the runs of one specimen; a specimen no run has is an error that
// lists the known ones.
func bySpecimen(runs []journal.Run, specimen string) ([]journal.Run, error) {
	var out []journal.Run
	var known []string
	for _, r := range runs {
		if r.Specimen == specimen {
			out = append(out, r)
		}
		known = append(known, r.Specimen)
	}
	if len(out) > 0 {
		return out, nil
	}
	slices.Sort(known)
	return nil, fmt.Errorf("unknown specimen %q: known specimens: %s", specimen, listKnown(slices.Compact(known), 20))
}

// daemonClient talks to a running daemon's runs API.
type daemonClient struct {
	addr, token string
	http        *http.Client
}

// newDaemonClient finds the daemon's address and token (flags, SETTLE_ variables, the
// configuration) and returns a client and the configuration it found.
func newDaemonClient(f *cliFlags) (*daemonClient, cliConfig, error) {
	c, err := f.loadConfig()
	if err != nil {
		return nil, c, err
	}
	t, err := f.daemon(c)
	if err != nil {
		return nil, c, err
	}
	if _, err := url.Parse(t.url); err != nil {
		return nil, c, fmt.Errorf("daemon address %q: %w", t.url, err)
	}
	hc := &http.Client{Timeout: 15 * time.Second}
	if t.tls != nil {
		hc.Transport = &http.Transport{TLSClientConfig: t.tls}
	}
	return &daemonClient{addr: t.url, token: t.token, http: hc}, c, nil
}

// dialHint says what to check when the daemon cannot be reached: its certificate when
// TLS verification failed, else whether it runs at the configured address.
func dialHint(err error) string {
	var cv *tls.CertificateVerificationError
	if errors.As(err, &cv) {
		return "the daemon's certificate was not accepted: give --config with the daemon's configuration, whose http.tls_cert this client trusts"
	}
	return "is `settle run` running there? its address is listen in the configuration"
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
		return fmt.Errorf("daemon at %s: %w (%s)", c.addr, err, dialHint(err))
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

// configuredChannel refuses a channel the configuration does not name, listing the
// ones it does (without a configuration the daemon judges).
func configuredChannel(c cliConfig, channel string) error {
	if c.cfg == nil {
		return nil
	}
	var known []string
	for _, ch := range c.cfg.Channels {
		if ch.Name == channel {
			return nil
		}
		known = append(known, ch.Name)
	}
	slices.Sort(known)
	return fmt.Errorf("unknown channel %q: channels in %s: %s", channel, c.path, listKnown(known, 20))
}

func newRunStartCmd() *cobra.Command {
	var f cliFlags
	var specFile, targets string
	var spec journal.RunSpec
	cmd := &cobra.Command{
		Use:   "run-start --channel C --specimen ID [--description TEXT] [--specimen-file FILE] [--targets JSON] [--config FILE]",
		Short: "Tell the running daemon that a specimen is on a channel (start a run)",
		Long: `Start a run on the running daemon: from now, the channel's readings, forecasts and
target crossings belong to the specimen. --specimen-file is the specimen description
(the YAML 'settle fit --specimen' reads: shape, size_m, length_m, sensor, material),
stored with the run (the daemon and reports forecast with the channel's configured
specimen, channels[].specimen); --targets a JSON array such
as [{"name":"handle","celsius":45,"handling":true},{"name":"settled","within":2}]
stored with the run (default: the channel's configured targets).

The daemon's address and API token come from the configuration (--config, else
SETTLE_CONFIG, else ` + defaultConfigPath + ` if it exists: listen and http.token), with
--addr/SETTLE_LISTEN and --token/SETTLE_TOKEN overriding. The daemon refuses run
changes until http.token is set in its configuration.`,
		Example: "  settle run-start --config /etc/settle/settle.yaml --channel rack-3 --specimen S-2026-041 --description 'quenched bar'",
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
				if _, err := predict.ParseTargets([]byte(targets)); err != nil {
					return fmt.Errorf("--targets: %w", err)
				}
				spec.Targets = json.RawMessage(targets)
			}
			c, cc, err := newDaemonClient(&f)
			if err != nil {
				return err
			}
			if err := configuredChannel(cc, spec.Channel); err != nil {
				return fmt.Errorf("run-start: %w", err)
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
	f.addDaemonFlags(cmd)
	_ = cmd.MarkFlagRequired("channel")
	_ = cmd.MarkFlagRequired("specimen")
	return cmd
}

func newRunStopCmd() *cobra.Command {
	var f cliFlags
	var channel, runID string
	cmd := &cobra.Command{
		Use:   "run-stop (--channel C | --run ID) [--config FILE]",
		Short: "Tell the running daemon that a run has ended (specimen removed)",
		Long: `Stop a run on the running daemon: the active run of --channel, or the run --run
names. The daemon records the forecast it shows at that moment as the run's last, so a
later 'settle report' shows the same figures. The address and token are found as for
'settle run-start'.`,
		Example: "  settle run-stop --config /etc/settle/settle.yaml --channel rack-3",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			if (channel == "") == (runID == "") {
				return errors.New("run-stop: give exactly one of --channel C or --run ID")
			}
			c, cc, err := newDaemonClient(&f)
			if err != nil {
				return err
			}
			if runID == "" {
				if runID, err = activeRunID(cmd.Context(), c, cc, channel); err != nil {
					return err
				}
			}
			var run journal.Run
			if err := c.call(cmd.Context(), http.MethodPost, "/api/v1/runs/"+url.PathEscape(runID)+"/stop", struct{}{}, &run); err != nil {
				return unknownRun(cmd.Context(), c, runID, err)
			}
			fmt.Fprintf(cmd.OutOrStdout(), "stopped run %s (%s on %s)\n", run.ID, run.Specimen, run.Channel)
			return nil
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&channel, "channel", "", "stop the active run of this channel")
	fl.StringVar(&runID, "run", "", "stop this run")
	f.addDaemonFlags(cmd)
	return cmd
}

// activeRunID is the id of channel's active run; none is an error that names the
// channels that have one.
func activeRunID(ctx context.Context, c *daemonClient, cc cliConfig, channel string) (string, error) {
	if err := configuredChannel(cc, channel); err != nil {
		return "", fmt.Errorf("run-stop: %w", err)
	}
	var list struct{ Runs []journal.Run }
	if err := c.call(ctx, http.MethodGet, "/api/v1/runs?active=true", nil, &list); err != nil {
		return "", err
	}
	var busy []string
	for _, r := range list.Runs {
		if r.Channel == channel {
			return r.ID, nil
		}
		busy = append(busy, r.Channel)
	}
	slices.Sort(busy)
	return "", fmt.Errorf("run-stop: no active run on channel %s; channels with an active run: %s", channel, listKnown(busy, 20))
}

// unknownRun turns the daemon's "no such run" into an error listing its newest runs.
func unknownRun(ctx context.Context, c *daemonClient, id string, err error) error {
	if !strings.Contains(err.Error(), "HTTP 404") {
		return err
	}
	var list struct{ Runs []journal.Run }
	if c.call(ctx, http.MethodGet, "/api/v1/runs?limit=10", nil, &list) != nil {
		return err
	}
	ids := []string{}
	for _, r := range list.Runs {
		ids = append(ids, r.ID)
	}
	return fmt.Errorf("run-stop: unknown run %q: newest runs: %s", id, listKnown(ids, 10))
}
