package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/cobra"
	"gonum.org/v1/plot/vg"

	"github.com/settle-lab/settle/internal/forecastjson"
	"github.com/settle-lab/settle/predict"
	"github.com/settle-lab/settle/report"
)

func init() { subcommands = append(subcommands, newFitCmd) }

// fitRequest is one `settle fit` invocation.
type fitRequest struct {
	file         string
	asJSON       bool
	until        float64
	hasUntil     bool
	targets      []string
	band         float64
	specimenPath string
	plotPath     string
	// progress receives progress lines for a fit that takes more than a second
	// (standard error; nil: none).
	progress io.Writer
}

// handlingMaxC is the highest fixed target that `settle fit` treats as a handling
// temperature when the target's name does not say so: about where brief contact with
// a hot metal surface starts to burn (common practice; EN ISO 13732-1 puts the burn
// threshold for a few seconds' contact with bare metal in the 50–70 °C range — from
// memory, not re-checked).
const handlingMaxC = 60

func newFitCmd() *cobra.Command {
	var r fitRequest
	cmd := &cobra.Command{
		Use:   "fit FILE [--json] [--until S] [--target NAME=CELSIUS]... [--settle-band C] [--specimen SPEC.yaml] [--plot OUT.png]",
		Short: "Fit a recorded curve and forecast its targets, as the daemon would",
		Long: `Fit a recorded temperature curve offline with the same engine the daemon uses
(segment onset, spike removal, model choice between the lumped exponential, the
lumped model with a temperature-dependent surface coefficient and, for a described
specimen whose Biot number is 0.1 or more, conduction inside it; intervals) and
forecast when it reaches its targets.

FILE is a CSV with a header naming the time in seconds (t_s, or elapsed_s as
'settle export' writes it), the temperature (temp_c or celsius) and optionally a
measured ambient (ambient_c); other columns are ignored, so an export is read as is.
Fields are separated by ',' or ';' (found from the header), and numbers take '.' or
',' as the decimal mark ("21,5" in a ';' file). An empty or non-numeric temperature is
a missing reading; a row with a cell missing or one too many, or a time that is not a
number, is left out and named with its line number in the notes (the first few, then a
count). An empty file is an error. A fit that takes more than a second shows its
progress on standard error (never on standard output, where --json writes).

--until S uses only rows with t_s <= S: the forecast as it would have been live at S.
--target NAME=CELSIUS adds a fixed target (repeatable); --settle-band C adds a target
named "settled": within C °C of the temperature the curve settles toward.
--specimen SPEC.yaml describes the specimen:
  shape     slab | cylinder | sphere | short-cylinder | block
  size_m    half-thickness (slab, block) or radius (cylinders, sphere), m
  length_m  full height of a slab or block, full length of a cylinder, m
            (needed for short-cylinder and block; 0: a slab 10× as high as
            thick, a long cylinder)
  width_m   full width of a block, m (block only, needed)
  sensor    center | surface
  material  name (a built-in material, e.g. concrete, brass, "cast iron") and/or
            density_kg_m3, specific_heat_j_kgk, conductivity_w_mk, emissivity
            (values given override the named material's)
With a specimen whose Biot number is 0.1 or more the model is conduction-series
(exact series, constant h) or, for a specimen 200 K or more above its ambient,
conduction-fv (finite volume with h(T)); with a surface sensor the centre is
forecast too, and handling targets follow the hottest point (the centre while
cooling), which lags the surface.
--plot OUT.png draws the readings, the fitted curve, the targets and their intervals.

Times in the output are on the file's own time axis. A target named like "handle" or
a fixed target at or below 60 °C on a cooling curve counts as a handling temperature;
the summary then shows the handling cautions. Forecasts are estimates.`,
		Example: "  settle fit run.csv --target handle=50 --settle-band 1\n  settle fit run.csv --json --until 600 --specimen bar.yaml --plot run.png",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			r.file = args[0]
			r.hasUntil = cmd.Flags().Changed("until")
			r.progress = cmd.ErrOrStderr()
			res, err := r.run()
			if err != nil {
				return fmt.Errorf("fit: %w", err)
			}
			if r.plotPath != "" {
				if err := res.plot(r.plotPath); err != nil {
					return fmt.Errorf("fit: --plot %s: %w", r.plotPath, err)
				}
			}
			if r.asJSON {
				return res.writeJSON(cmd.OutOrStdout())
			}
			return res.writeText(cmd.OutOrStdout())
		},
	}
	fl := cmd.Flags()
	fl.BoolVar(&r.asJSON, "json", false, "print one JSON object instead of a summary")
	fl.Float64Var(&r.until, "until", 0, "use only rows with t_s <= S seconds")
	fl.StringArrayVar(&r.targets, "target", nil, "a fixed target NAME=CELSIUS (repeatable)")
	fl.Float64Var(&r.band, "settle-band", 0, "add a target \"settled\": within C °C of the settling temperature")
	fl.StringVar(&r.specimenPath, "specimen", "", "specimen description YAML")
	fl.StringVar(&r.plotPath, "plot", "", "write a PNG figure of the fit")
	return cmd
}

// fitResult is the outcome of `settle fit`: the curve used, the forecast and how to
// map its times back onto the file's axis.
type fitResult struct {
	curve    predict.CurveFile
	whole    predict.CurveFile // the file's every row, --until or not (the figure fades the rest)
	until    float64
	forecast *predict.Forecast
	origin   time.Time // the file's t_s = 0
	dropped  int
}

// fitOrigin anchors the file's time axis to absolute times for the engine.
var fitOrigin = time.Date(2000, 1, 1, 0, 0, 0, 0, time.UTC)

// run reads the file, the specimen and the targets, and analyses the curve.
func (r fitRequest) run() (*fitResult, error) {
	targets, err := r.parseTargets()
	if err != nil {
		return nil, err
	}
	var opt predict.AnalyzeOptions
	if r.specimenPath != "" {
		sp, err := predict.LoadSpecimen(r.specimenPath)
		if err != nil {
			return nil, fmt.Errorf("--specimen: %w", err)
		}
		opt.Specimen = &sp
	}
	f, err := os.Open(r.file)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var size int64
	if st, err := f.Stat(); err == nil {
		size = st.Size()
	}
	prog := startProgress(r.progress, r.file, size)
	defer prog.end()
	curve, err := predict.ReadCurveCSV(prog.reader(f), r.file)
	if err != nil {
		return nil, err
	}
	whole := curve
	if r.hasUntil {
		curve = curve.Until(r.until)
	}
	if len(curve.Times) == 0 {
		why := ""
		if note := whole.MalformedNote(); note != "" {
			why = ": " + note
		}
		return nil, fmt.Errorf("%s: no rows with a time%s%s", r.file, map[bool]string{true: " at or before --until", false: ""}[r.hasUntil], why)
	}
	res := &fitResult{curve: curve, whole: whole, until: curve.Times[len(curve.Times)-1], origin: fitOrigin}
	if r.hasUntil {
		res.until = r.until
	}
	prog.setPhase("fitting " + thousands(len(curve.Times)) + " readings")
	p, onset, dropped := predict.Prepare(curve.Times, curve.Celsius, curve.FilledAmbient())
	res.dropped = dropped
	res.forecast = predict.Analyze(p, fitOrigin.Add(secondsDur(onset)), markHandling(targets, curve), opt)
	if dropped > 0 {
		res.forecast.Notes = append(res.forecast.Notes, fmt.Sprintf("%d readings were left out as missing, non-numeric or spikes.", dropped))
	}
	if note := curve.MalformedNote(); note != "" {
		res.forecast.Notes = append(res.forecast.Notes, note)
	}
	return res, nil
}

// parseTargets turns --target and --settle-band into targets, in that order.
func (r fitRequest) parseTargets() ([]predict.Target, error) {
	var out []predict.Target
	seen := map[string]bool{}
	for _, s := range r.targets {
		name, val, ok := strings.Cut(s, "=")
		name = strings.TrimSpace(name)
		c, err := strconv.ParseFloat(strings.TrimSpace(val), 64)
		if !ok || name == "" || err != nil || math.IsNaN(c) || math.IsInf(c, 0) {
			return nil, fmt.Errorf("--target %q: want NAME=CELSIUS, e.g. handle=50", s)
		}
		if seen[name] {
			return nil, fmt.Errorf("--target %q: target %q given twice", s, name)
		}
		seen[name] = true
		out = append(out, predict.Target{Name: name, Celsius: c})
	}
	if r.band < 0 || math.IsNaN(r.band) {
		return nil, fmt.Errorf("--settle-band %g: must be positive", r.band)
	}
	if r.band > 0 {
		if seen["settled"] {
			return nil, errors.New("--settle-band: a --target is already named \"settled\"")
		}
		out = append(out, predict.Target{Name: "settled", Celsius: math.NaN(), Within: r.band})
	}
	return out, nil
}

// markHandling flags handling targets: a name that says so, or a fixed target at or
// below handlingMaxC on a curve that cools.
func markHandling(ts []predict.Target, c predict.CurveFile) []predict.Target {
	cooling := false
	var first, last float64 = math.NaN(), math.NaN()
	for _, v := range c.Celsius {
		if !math.IsNaN(v) {
			if math.IsNaN(first) {
				first = v
			}
			last = v
		}
	}
	cooling = first > last
	for i := range ts {
		n := strings.ToLower(ts[i].Name)
		if strings.Contains(n, "handl") || strings.Contains(n, "touch") ||
			!ts[i].IsWithin() && cooling && ts[i].Celsius <= handlingMaxC {
			ts[i].Handling = true
		}
	}
	return ts
}

// secondsDur converts seconds to a Duration.
func secondsDur(s float64) time.Duration { return time.Duration(s * float64(time.Second)) }

// fileTime converts an engine time back to the file's t_s.
func (res *fitResult) fileTime(t time.Time) float64 { return t.Sub(res.origin).Seconds() }

func (res *fitResult) writeJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	return enc.Encode(forecastjson.NewFileFit(res.forecast, res.origin, res.until))
}

// writeText prints the human-readable summary.
func (res *fitResult) writeText(w io.Writer) error {
	f := res.forecast
	var b strings.Builder
	fmt.Fprintf(&b, "model %s over %d readings (t_s %s to %s)", f.Model, f.Points,
		secondsText(res.fileTime(f.SegmentStart)), secondsText(res.until))
	if !math.IsNaN(f.RMSE) {
		fmt.Fprintf(&b, ", rms residual %.3g °C", f.RMSE)
	}
	b.WriteString("\n")
	names := make([]string, 0, len(f.Params))
	for _, p := range f.Params {
		if math.IsNaN(p.Value) {
			continue
		}
		line := fmt.Sprintf("  %s = %.5g", p.Name, p.Value)
		if !math.IsNaN(p.StdErr) && !math.IsInf(p.StdErr, 0) {
			line += fmt.Sprintf(" ± %.2g", p.StdErr)
		}
		names = append(names, strings.TrimRight(line+" "+p.Unit, " "))
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintln(&b, n)
	}
	if !math.IsNaN(f.Biot) {
		fmt.Fprintf(&b, "  Biot number %.3g\n", f.Biot)
	}
	handling := false
	for _, tg := range f.Targets {
		fmt.Fprintf(&b, "target %s (%.4g °C): %s\n", tg.Target.Name, tg.Celsius, res.describe(tg))
		handling = handling || tg.Target.Handling
	}
	for _, n := range f.Notes {
		fmt.Fprintf(&b, "note: %s\n", n)
	}
	if handling {
		fmt.Fprintln(&b, "Handling cautions:")
		for _, c := range predict.HandlingCautions {
			fmt.Fprintf(&b, "  - %s\n", c)
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// secondsText prints seconds on the file's axis to at most a tenth of a second.
func secondsText(v float64) string { return strconv.FormatFloat(math.Round(v*10)/10, 'f', -1, 64) }

// notBefore says an open-ended forecast in words: the early bound, and why there is
// no late one (and, for a handling target, no time to plan with).
func (res *fitResult) notBefore(tg predict.TargetForecast) string {
	s := "predicted: not before t_s " + secondsText(math.Round(res.fileTime(tg.Earliest))) +
		", with no late end yet (the readings do not yet bound how late it may be: the notes say why)"
	if !tg.At.IsZero() {
		s += "; central estimate t_s " + secondsText(math.Round(res.fileTime(tg.At)))
	}
	if tg.Target.Handling {
		s += "; no time to plan handling with yet"
	}
	return s + ", an estimate"
}

// describe says one target's state in words.
func (res *fitResult) describe(tg predict.TargetForecast) string {
	at := func(t time.Time) string { return "t_s " + secondsText(math.Round(res.fileTime(t))) }
	switch tg.State {
	case predict.StatePredicted:
		if tg.Latest.IsZero() {
			return res.notBefore(tg)
		}
		if tg.Target.Handling {
			return fmt.Sprintf("predicted: below it by %s with high confidence (the late end of the 90 %% interval %.0f to %.0f s; central estimate %s), an estimate",
				at(tg.Latest), res.fileTime(tg.Earliest), res.fileTime(tg.Latest), at(tg.At))
		}
		return fmt.Sprintf("predicted at %s (90 %% interval %.0f to %.0f s), an estimate",
			at(tg.At), res.fileTime(tg.Earliest), res.fileTime(tg.Latest))
	case predict.StateReached:
		if tg.Estimated {
			return "reached at about " + at(tg.At) + " (estimated from the fit: the crossing fell in a gap in the readings or at the unseen core)"
		}
		return "reached at " + at(tg.At)
	case predict.StateHolding:
		return fmt.Sprintf("holding, %.0f s left (until %s)", tg.At.Sub(res.origin).Seconds()-res.until, at(tg.At))
	case predict.StateUnreachable:
		return "unreachable: the curve settles before it"
	case predict.StateEmpty:
		return "no specimen"
	}
	return "insufficient data for a forecast"
}

// plot writes the figure of the fit (see report.Figure): the readings (faded after
// --until), the fitted curve, the estimated centre of a surface sensor, each target's
// level and interval, and the states and notes in the caption.
func (res *fitResult) plot(path string) error {
	f := report.Figure{
		Title:       "settle fit: " + res.forecast.Model,
		Origin:      res.origin,
		OriginLabel: "t_s = 0",
		Forecast:    res.forecast,
		Cautions:    predict.HandlingCautions,
	}
	for i, t := range res.whole.Times {
		f.Readings = append(f.Readings, report.Sample{Time: res.origin.Add(secondsDur(t)), Celsius: res.whole.Celsius[i]})
	}
	if len(f.Readings) == 0 {
		return errors.New("no readings to plot")
	}
	if last := res.whole.Times[len(res.whole.Times)-1]; res.until < last {
		f.Cutoff = res.origin.Add(secondsDur(res.until))
	}
	for _, tg := range res.forecast.Targets {
		f.Targets = append(f.Targets, report.FigureTarget{Name: tg.Target.Name, Celsius: tg.Celsius, Handling: tg.Target.Handling,
			State: string(tg.State), At: tg.At, Earliest: tg.Earliest, Latest: tg.Latest})
	}
	out, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := report.FigurePNG(out, f, 11*vg.Inch, 7.5*vg.Inch); err != nil {
		out.Close()
		return err
	}
	return out.Close()
}
