package report

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict"
)

// The figure style, shared by `settle fit --plot` and the run reports. Its colours are
// the rack board's (exporter/web/static/style.css): ink for readings, indigo for the
// fit, plum for the estimated centre, teal for the handling interval, amber for other
// intervals, vermilion for the handling limit. Translucent fills are premultiplied
// (color.RGBA's channels never exceed its alpha), so a band is a clean tint.
var (
	figInk      = color.RGBA{R: 0x24, G: 0x21, B: 0x1c, A: 0xff}
	figMuted    = color.RGBA{R: 0x5e, G: 0x58, B: 0x4d, A: 0xff}
	figFaded    = color.RGBA{R: 0xb9, G: 0xb2, B: 0xa4, A: 0xff}
	figGrid     = color.RGBA{R: 0xe6, G: 0xe0, B: 0xd3, A: 0xff}
	figPaper    = color.RGBA{R: 0xff, G: 0xfd, B: 0xf8, A: 0xff}
	figFit      = color.RGBA{R: 0x43, G: 0x38, B: 0xa8, A: 0xff}
	figCentre   = color.RGBA{R: 0x7d, G: 0x17, B: 0x60, A: 0xff}
	figLimit    = color.RGBA{R: 0xb4, G: 0x23, B: 0x18, A: 0xff}
	figHandling = color.RGBA{R: 0x0d, G: 0x6b, B: 0x5e, A: 0xff}
	figOther    = color.RGBA{R: 0x8f, G: 0x47, B: 0x00, A: 0xff}
)

// figFont is the figures' typeface (Liberation Sans, which gonum/plot embeds).
var figFont = font.Font{Typeface: "Liberation", Variant: "Sans"}

// BandAlpha is the opacity of an interval band (of 255).
const BandAlpha = 56

// Tint returns c at alpha a (of 255) as a premultiplied colour.
func Tint(c color.RGBA, a uint8) color.RGBA {
	m := func(v uint8) uint8 { return uint8((uint16(v)*uint16(a) + 127) / 255) }
	return color.RGBA{R: m(c.R), G: m(c.G), B: m(c.B), A: a}
}

// BandColour is the fill of a target's interval band.
func BandColour(handling bool) color.RGBA {
	if handling {
		return Tint(figHandling, BandAlpha)
	}
	return Tint(figOther, BandAlpha)
}

// Figure is what one figure shows. Times are absolute; the axis shows the time since
// Origin as h:mm.
type Figure struct {
	// Title heads the figure.
	Title string
	// Origin is 0:00 on the time axis; OriginLabel says what it is.
	Origin      time.Time
	OriginLabel string
	// Readings are the measured temperatures; invalid ones are skipped and break the line.
	Readings []Sample
	// Cutoff, when set, is the last reading the fit saw: later readings are drawn faded.
	Cutoff time.Time
	// Forecast gives the fitted curve, the estimated centre, the model and the notes.
	Forecast *predict.Forecast
	// Targets are drawn as levels with their interval bands and crossings.
	Targets []FigureTarget
	// Cautions, shown in the caption when a handling target is in the figure.
	Cautions []string
}

// Sample is one reading.
type Sample struct {
	Time    time.Time
	Celsius float64
}

// FigureTarget is one target's level and forecast.
type FigureTarget struct {
	Name     string
	Celsius  float64
	Handling bool
	// State is the forecast state ("predicted", "reached", ...); empty when unknown.
	State string
	// At, Earliest and Latest are the forecast (zero when none); Actual the observed
	// crossing.
	At, Earliest, Latest, Actual time.Time
	// ActualEstimated marks an Actual that is the fitted crossing (inside a gap of the
	// readings, or at an unseen core), not a reading's time.
	ActualEstimated bool
}

// Figure sizes at figDPI.
const (
	figDPI = 96
	// LegendWidth is the column right of the data that holds the legend.
	legendWidth = 2.6 * vg.Inch
)

// Elapsed h:mm ticks: whole steps of 1, 2, 5, 10, 15, 30 minutes or 1, 2, 3, 6, 12, 24 h.
type hmTicks struct{}

var hmSteps = []float64{60, 120, 300, 600, 900, 1800, 3600, 7200, 10800, 21600, 43200, 86400}

// Ticks implements plot.Ticker over seconds since the origin.
func (hmTicks) Ticks(lo, hi float64) []plot.Tick {
	step := hmSteps[len(hmSteps)-1]
	for _, s := range hmSteps {
		if (hi-lo)/s <= 8 {
			step = s
			break
		}
	}
	var out []plot.Tick
	for v := math.Ceil(lo/step) * step; v <= hi; v += step {
		out = append(out, plot.Tick{Value: v, Label: HMLabel(v)})
		for m := 1; m < 5 && step >= 300; m++ { // minor ticks at fifths
			if mv := v + step*float64(m)/5; mv <= hi {
				out = append(out, plot.Tick{Value: mv})
			}
		}
	}
	return out
}

// HMLabel writes seconds as h:mm ("1:05"; "-0:10" before the origin).
func HMLabel(s float64) string {
	sign := ""
	if s < 0 {
		sign, s = "-", -s
	}
	m := int(math.Round(s / 60))
	return fmt.Sprintf("%s%d:%02d", sign, m/60, m%60)
}

// plainTicks are the default value ticks written without trailing zeros ("250", not
// "250.00").
type plainTicks struct{}

// Ticks implements plot.Ticker.
func (plainTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := plot.DefaultTicks{}.Ticks(lo, hi)
	for i := range ts {
		if ts[i].Label != "" {
			ts[i].Label = strconv.FormatFloat(ts[i].Value, 'f', -1, 64)
		}
	}
	return ts
}

// styled applies the figure style to p.
func styled(p *plot.Plot) {
	p.BackgroundColor = figPaper
	p.Title.TextStyle.Color = figInk
	p.Title.TextStyle.Font = font.From(figFont, 15)
	p.Title.Padding = vg.Points(6)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Color, a.Label.TextStyle.Color, a.Tick.Label.Color, a.Tick.Color = figMuted, figInk, figInk, figMuted
		a.Label.TextStyle.Font = font.From(figFont, 12)
		a.Tick.Label.Font = font.From(figFont, 11)
	}
	g := plotter.NewGrid()
	g.Vertical.Color, g.Horizontal.Color = figGrid, figGrid
	p.Add(g)
}

// figure builds the readings plot of f and its legend entries.
func (f Figure) plot() (*plot.Plot, plot.Legend, error) {
	p := plot.New()
	styled(p)
	leg := plot.NewLegend()
	leg.TextStyle.Font = font.From(figFont, 11)
	leg.TextStyle.Color = figInk
	p.Title.Text = f.Title
	p.X.Label.Text = "time since " + f.OriginLabel + " (h:mm)"
	p.Y.Label.Text = "temperature, °C"
	p.X.Tick.Marker, p.Y.Tick.Marker = hmTicks{}, plainTicks{}
	sec := func(t time.Time) float64 { return t.Sub(f.Origin).Seconds() }
	lo, hi, end := math.Inf(1), math.Inf(-1), math.Inf(-1)
	var fresh, faded []plotter.XYs
	for _, s := range f.Readings {
		if math.IsNaN(s.Celsius) || math.IsInf(s.Celsius, 0) {
			fresh, faded = append(fresh, nil), append(faded, nil) // break both lines
			continue
		}
		pt := plotter.XY{X: sec(s.Time), Y: s.Celsius}
		lo, hi, end = math.Min(lo, s.Celsius), math.Max(hi, s.Celsius), math.Max(end, pt.X)
		if !f.Cutoff.IsZero() && s.Time.After(f.Cutoff) {
			faded = appendPoint(faded, pt)
		} else {
			fresh = appendPoint(fresh, pt)
		}
	}
	for _, t := range f.Targets {
		for _, v := range []time.Time{t.Latest, t.Actual} {
			if !v.IsZero() {
				end = math.Max(end, sec(v))
			}
		}
		if !math.IsNaN(t.Celsius) {
			lo, hi = math.Min(lo, t.Celsius), math.Max(hi, t.Celsius)
		}
	}
	if math.IsInf(lo, 0) {
		lo, hi, end = 0, 100, 600
	}
	pad := math.Max(1, 0.06*(hi-lo))
	lo, hi = lo-pad, hi+pad
	p.Y.Min, p.Y.Max = lo, hi
	p.X.Min, p.X.Max = math.Min(0, firstX(f, sec)), end*1.03+1
	// Bands first, under everything.
	for _, t := range f.Targets {
		if t.Earliest.IsZero() || t.Latest.IsZero() || math.IsNaN(t.Celsius) || (t.State != "" && t.State != string(predict.StatePredicted) && t.State != string(predict.StateHolding)) {
			continue
		}
		a, b := sec(t.Earliest), sec(t.Latest)
		if b-a < (p.X.Max-p.X.Min)/400 {
			b = a + (p.X.Max-p.X.Min)/400
		}
		band, err := plotter.NewPolygon(plotter.XYs{{X: a, Y: lo}, {X: b, Y: lo}, {X: b, Y: hi}, {X: a, Y: hi}})
		if err != nil {
			return nil, leg, err
		}
		band.Color, band.LineStyle.Width = BandColour(t.Handling), 0
		p.Add(band)
		leg.Add(fmt.Sprintf("%s: ~90 %% interval", t.Name), band)
	}
	for _, t := range f.Targets {
		if math.IsNaN(t.Celsius) {
			continue
		}
		l, err := plotter.NewLine(plotter.XYs{{X: p.X.Min, Y: t.Celsius}, {X: p.X.Max, Y: t.Celsius}})
		if err != nil {
			return nil, leg, err
		}
		l.Color, l.Width, l.Dashes = figMuted, vg.Points(1), []vg.Length{vg.Points(2), vg.Points(3)}
		if t.Handling {
			l.Color, l.Width, l.Dashes = figLimit, vg.Points(1.5), []vg.Length{vg.Points(7), vg.Points(4)}
		}
		p.Add(l)
		leg.Add(fmt.Sprintf("%s %s %.1f °C", t.Name, map[bool]string{true: "limit", false: "level"}[t.Handling], t.Celsius), l)
	}
	if fc := f.Forecast; fc != nil {
		from := fc.SegmentStart
		if from.Before(f.Origin) || from.IsZero() {
			from = f.Origin
		}
		to := f.Origin.Add(time.Duration(p.X.Max * float64(time.Second)))
		if err := addLines(p, &leg, sampleFn(fc.Curve, from, to, sec), figFit, 2.8, []vg.Length{vg.Points(8), vg.Points(3)}, "fitted "+fc.Model); err != nil {
			return nil, leg, err
		}
		if err := addLines(p, &leg, sampleFn(fc.Centre, from, to, sec), figCentre, 2, []vg.Length{vg.Points(1.5), vg.Points(2.5)}, "estimated centre (fit)"); err != nil {
			return nil, leg, err
		}
	}
	if err := addLines(p, &leg, fresh, figInk, 1.4, nil, "readings"); err != nil {
		return nil, leg, err
	}
	if err := addLines(p, &leg, faded, figFaded, 1.4, nil, "readings after the fit's cut-off"); err != nil {
		return nil, leg, err
	}
	for _, t := range f.Targets {
		c := figOther
		if t.Handling {
			c = figHandling
		}
		if err := mark(p, &leg, t.At, t.Celsius, sec, c, draw.RingGlyph{}, "", t.State == string(predict.StatePredicted)); err != nil {
			return nil, leg, err
		}
		label := "observed " + t.Name
		if t.ActualEstimated {
			label = t.Name + " crossed (estimated: in a gap of the readings)"
		}
		if err := mark(p, &leg, t.Actual, t.Celsius, sec, c, draw.CrossGlyph{}, label, true); err != nil {
			return nil, leg, err
		}
	}
	return p, leg, nil
}

func firstX(f Figure, sec func(time.Time) float64) float64 {
	if len(f.Readings) == 0 {
		return 0
	}
	return sec(f.Readings[0].Time)
}

// appendPoint appends pt to the last line of ls, starting one when there is none.
func appendPoint(ls []plotter.XYs, pt plotter.XY) []plotter.XYs {
	if len(ls) == 0 {
		ls = append(ls, nil)
	}
	ls[len(ls)-1] = append(ls[len(ls)-1], pt)
	return ls
}

// sampleFn samples fn over [from, to]; an invalid value (NaN before the fitted
// segment, say) breaks the line instead of drawing it to zero.
func sampleFn(fn func(time.Time) float64, from, to time.Time, sec func(time.Time) float64) []plotter.XYs {
	if fn == nil || !to.After(from) {
		return nil
	}
	const n = 400
	var out []plotter.XYs
	for i := 0; i <= n; i++ {
		t := from.Add(time.Duration(float64(to.Sub(from)) * float64(i) / n))
		v := fn(t)
		if math.IsNaN(v) || math.IsInf(v, 0) {
			out = append(out, nil)
			continue
		}
		out = appendPoint(out, plotter.XY{X: sec(t), Y: v})
	}
	return out
}

// addLines draws each run of at least two points as one line; the legend names the
// first.
func addLines(p *plot.Plot, leg *plot.Legend, ls []plotter.XYs, c color.RGBA, width float64, dashes []vg.Length, name string) error {
	named := false
	for _, xy := range ls {
		if len(xy) < 2 {
			continue
		}
		l, err := plotter.NewLine(xy)
		if err != nil {
			return err
		}
		l.Color, l.Width, l.Dashes = c, vg.Points(width), dashes
		p.Add(l)
		if !named {
			leg.Add(name, l)
			named = true
		}
	}
	return nil
}

// mark draws a glyph at (at, y) when at is set.
func mark(p *plot.Plot, leg *plot.Legend, at time.Time, y float64, sec func(time.Time) float64, c color.RGBA, g draw.GlyphDrawer, label string, show bool) error {
	if at.IsZero() || math.IsNaN(y) || !show {
		return nil
	}
	sc, err := plotter.NewScatter(plotter.XYs{{X: sec(at), Y: y}})
	if err != nil {
		return err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: c, Radius: vg.Points(5), Shape: g}
	p.Add(sc)
	if label != "" {
		leg.Add(label, sc)
	}
	return nil
}

// Caption lines: the state of each target, the notes, and the cautions when a handling
// target is shown.
func (f Figure) caption() []string {
	var out []string
	sec := func(t time.Time) string { return HMLabel(t.Sub(f.Origin).Seconds()) }
	handling := false
	for _, t := range f.Targets {
		handling = handling || t.Handling
		kind := "target"
		if t.Handling {
			kind = "handling target"
		}
		line := fmt.Sprintf("%s %s %.1f °C: ", kind, t.Name, t.Celsius)
		switch t.State {
		case string(predict.StatePredicted):
			if t.Latest.IsZero() && !t.Earliest.IsZero() {
				// An open-ended interval: some settling temperatures never reach it.
				line += "predicted not before " + sec(t.Earliest) + ", no late end yet"
				if !t.At.IsZero() {
					line += " (central estimate " + sec(t.At) + ")"
				}
				break
			}
			line += "predicted " + sec(t.At)
			if !t.Earliest.IsZero() && !t.Latest.IsZero() {
				line += fmt.Sprintf(" (~90 %% interval %s–%s)", sec(t.Earliest), sec(t.Latest))
			}
			if t.Handling && !t.Latest.IsZero() {
				line += "; plan with the late end, " + sec(t.Latest)
			}
		case string(predict.StateReached):
			line += "reached"
			if !t.At.IsZero() {
				line += " at " + sec(t.At)
			}
		case string(predict.StateHolding):
			line += "holding until " + sec(t.At)
		case "":
			line += "no forecast"
		default:
			line += t.State
		}
		if !t.Actual.IsZero() {
			if t.ActualEstimated {
				line += "; crossed at " + sec(t.Actual) + " (estimated from the fit: no reading there)"
			} else {
				line += "; observed " + sec(t.Actual)
			}
		}
		out = append(out, line+".")
	}
	if fc := f.Forecast; fc != nil {
		out = append(out, fc.Notes...)
	} else {
		out = append(out, "No fitted model.")
	}
	if handling && len(f.Cautions) > 0 {
		out = append(out, "Handling times are estimates: "+strings.Join(f.Cautions, " "))
	}
	return out
}

// wrap breaks s into lines no wider than w in sty.
func wrap(sty draw.TextStyle, s string, w vg.Length) []string {
	var out []string
	line := ""
	for _, word := range strings.Fields(s) {
		try := strings.TrimSpace(line + " " + word)
		if line != "" && sty.Width(try) > w {
			out = append(out, line)
			line = word
			continue
		}
		line = try
	}
	if line != "" {
		out = append(out, line)
	}
	return out
}

// panel is one plot with its legend.
type panel struct {
	p   *plot.Plot
	leg plot.Legend
}

// layout draws the panels stacked in the left column, each legend right of its panel
// (outside the data), and the caption across the bottom. It returns the data canvas of
// the first panel, for tests that read pixels.
func layout(img *vgimg.Canvas, w, h vg.Length, panels []panel, caption []string) draw.Canvas {
	dc := draw.New(img)
	dc.SetColor(figPaper)
	dc.Fill(dc.Rectangle.Path())
	sty := draw.TextStyle{Color: figInk, Font: font.From(figFont, 11), Handler: plot.DefaultTextHandler}
	var lines []string
	for _, c := range caption {
		lines = append(lines, wrap(sty, c, w-vg.Inch*0.4)...)
	}
	lh := sty.Height("Mg") * 1.25
	capH := lh*vg.Length(len(lines)) + vg.Points(14)
	for i, l := range lines {
		dc.FillText(sty, vg.Point{X: vg.Inch * 0.2, Y: capH - vg.Points(8) - lh*vg.Length(i+1) + lh*0.25}, l)
	}
	rule := dc.Rectangle.Min.Y + capH
	dc.StrokeLine2(draw.LineStyle{Color: figGrid, Width: vg.Points(1)}, 0, rule, w, rule)
	n := vg.Length(len(panels))
	tall := (h - capH) / n
	var first draw.Canvas
	for i, pn := range panels {
		top := -tall * vg.Length(i)
		bottom := capH + tall*(n-1-vg.Length(i))
		gap := vg.Length(0)
		if i > 0 {
			gap = vg.Points(14) // room between one panel's axis label and the next title
		}
		c := draw.Crop(dc, 0, -legendWidth, bottom, top-gap)
		pn.p.Draw(c)
		if i == 0 {
			first = pn.p.DataCanvas(c)
		}
		lc := draw.Crop(dc, w-legendWidth+vg.Points(8), -vg.Points(6), bottom, top-gap-vg.Points(30))
		pn.leg.Top, pn.leg.Left = true, true
		pn.leg.ThumbnailWidth = vg.Points(26)
		pn.leg.Padding = vg.Points(5)
		pn.leg.Draw(lc)
	}
	return first
}

// FigurePNG draws f alone (the `settle fit --plot` figure) as a PNG of w × h.
func FigurePNG(out io.Writer, f Figure, w, h vg.Length) error {
	_, _, err := renderFigure(out, f, nil, w, h)
	return err
}

// renderFigure draws f (and below it the extra panels) and returns the readings plot
// and its data canvas (for tests).
func renderFigure(out io.Writer, f Figure, extra []panel, w, h vg.Length) (*plot.Plot, draw.Canvas, error) {
	p, leg, err := f.plot()
	if err != nil {
		return nil, draw.Canvas{}, err
	}
	img := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(figDPI))
	data := layout(img, w, h, append([]panel{{p, leg}}, extra...), f.caption())
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(out); err != nil {
		return nil, draw.Canvas{}, fmt.Errorf("write PNG: %w", err)
	}
	return p, data, nil
}

// Report figure size.
const (
	figWidth  = 12 * vg.Inch
	figHeight = 9 * vg.Inch
)

// WritePNG draws the run's figure: on top the readings, the fitted curve (and the
// estimated centre for a surface sensor), each target's level, interval band and
// observed crossing; below, the forecast history (predicted crossing and bounds against
// the time each forecast was made); the legend right of the data and the states, notes
// and cautions in the caption. Times are h:mm since the run's start.
func WritePNG(w io.Writer, s Summary, readings []daq.Reading, fc *predict.Forecast) error {
	f := RunFigure(s, readings, fc)
	bottom, err := historyPlot(s, s.Run.Started)
	if err != nil {
		return fmt.Errorf("plot run %s: %w", s.Run.ID, err)
	}
	if _, _, err := renderFigure(w, f, []panel{bottom}, figWidth, figHeight); err != nil {
		return fmt.Errorf("plot run %s: %w", s.Run.ID, err)
	}
	return nil
}

// RunFigure is the readings figure of a run: readings after the fit's last reading are
// drawn faded.
func RunFigure(s Summary, readings []daq.Reading, fc *predict.Forecast) Figure {
	f := Figure{
		Title:       fmt.Sprintf("Run %s — specimen %s on %s", s.Run.ID, s.Run.Specimen, s.Run.Channel),
		Origin:      s.Run.Started,
		OriginLabel: "run start " + s.Run.Started.UTC().Format("2006-01-02 15:04 UTC"),
		Forecast:    fc,
		Cautions:    s.Cautions,
	}
	if len(f.Cautions) == 0 {
		f.Cautions = predict.HandlingCautions
	}
	for _, r := range readings {
		c := r.Celsius
		if !r.OK() {
			c = math.NaN()
		}
		f.Readings = append(f.Readings, Sample{Time: r.Time, Celsius: c})
	}
	if fc != nil {
		f.Cutoff = fc.FittedAt
	}
	for _, t := range s.Targets {
		ft := FigureTarget{Name: t.Name, Celsius: math.NaN(), Handling: t.Handling, State: t.State}
		if t.Celsius != nil {
			ft.Celsius = *t.Celsius
		}
		ft.At, ft.Earliest, ft.Latest, ft.Actual = deref(t.PredictedAt), deref(t.Earliest), deref(t.Latest), deref(t.Actual)
		ft.ActualEstimated = t.ActualEstimated
		f.Targets = append(f.Targets, ft)
	}
	return f
}

func deref(t *time.Time) time.Time {
	if t == nil {
		return time.Time{}
	}
	return *t
}

// historyEnd is where the last stored forecast of t stops holding: the observed
// crossing, else the run's last reading.
func historyEnd(s Summary, t TargetSummary) time.Time {
	if t.Actual != nil {
		return *t.Actual
	}
	if s.Run.Summary != nil && !s.Run.Summary.Last.IsZero() {
		return s.Run.Summary.Last
	}
	if n := len(t.History); n > 0 {
		return t.History[n-1].Time
	}
	return s.Run.Started
}

// historySteps turns the stored forecasts (kept only when they changed) into step
// lines: each prediction holds until the next stored one, the last until end. Values
// are seconds since start.
func historySteps(t TargetSummary, start, end time.Time) (at, lo, hi plotter.XYs) {
	sec := func(v time.Time) float64 { return v.Sub(start).Seconds() }
	for i, h := range t.History {
		if h.PredictedAt == nil || h.State == "reached" {
			continue
		}
		until := end
		if i+1 < len(t.History) {
			until = t.History[i+1].Time
		}
		if until.Before(h.Time) {
			until = h.Time
		}
		x0, x1 := sec(h.Time), sec(until)
		y := sec(*h.PredictedAt)
		at = append(at, plotter.XY{X: x0, Y: y}, plotter.XY{X: x1, Y: y})
		if h.Earliest != nil && h.Latest != nil {
			a, b := sec(*h.Earliest), sec(*h.Latest)
			lo = append(lo, plotter.XY{X: x0, Y: a}, plotter.XY{X: x1, Y: a})
			hi = append(hi, plotter.XY{X: x0, Y: b}, plotter.XY{X: x1, Y: b})
		}
	}
	return at, lo, hi
}

// historyPlot draws each target's predicted crossing (with bounds) against the time
// the forecast was made, and its observed crossing as a horizontal line.
func historyPlot(s Summary, start time.Time) (panel, error) {
	p := plot.New()
	leg := plot.NewLegend()
	leg.TextStyle.Font = font.From(figFont, 11)
	leg.TextStyle.Color = figInk
	styled(p)
	p.Title.Text = "How the forecast converged"
	p.Title.TextStyle.Font = font.From(figFont, 13)
	p.X.Label.Text = "forecast made at (h:mm since start)"
	p.Y.Label.Text = "predicted crossing (h:mm)"
	p.X.Tick.Marker, p.Y.Tick.Marker = hmTicks{}, hmTicks{}
	any, bounds := false, false
	for _, t := range s.Targets {
		c := figOther
		if t.Handling {
			c = figHandling
		}
		at, lo, hi := historySteps(t, start, historyEnd(s, t))
		if len(at) > 0 {
			l, err := plotter.NewLine(at)
			if err != nil {
				return panel{}, err
			}
			l.Color, l.Width = c, vg.Points(1.8)
			p.Add(l)
			leg.Add("predicted "+t.Name, l)
			any = true
		}
		for _, b := range []plotter.XYs{lo, hi} {
			if len(b) > 0 {
				l, err := plotter.NewLine(b)
				if err != nil {
					return panel{}, err
				}
				l.Color, l.Width, l.Dashes = c, vg.Points(0.7), []vg.Length{vg.Points(3), vg.Points(2)}
				p.Add(l)
				if !bounds {
					leg.Add("~90 % interval (dashed)", l)
					bounds = true
				}
			}
		}
		if t.Actual != nil && len(t.History) > 0 {
			y := t.Actual.Sub(start).Seconds()
			x0, x1 := t.History[0].Time.Sub(start).Seconds(), t.Actual.Sub(start).Seconds()
			l, err := plotter.NewLine(plotter.XYs{{X: x0, Y: y}, {X: math.Max(x1, x0+1), Y: y}})
			if err != nil {
				return panel{}, err
			}
			l.Color, l.Width = figInk, vg.Points(1.2)
			p.Add(l)
			leg.Add("observed "+t.Name, l)
		}
	}
	if !any {
		p.Title.Text += " (no forecast history recorded)"
	}
	return panel{p, leg}, nil
}
