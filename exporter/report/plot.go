package report

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"github.com/settle-lab/settle/daq"
	"github.com/settle-lab/settle/predict"
)

// Figure size and resolution of the PNG.
const (
	figWidth  = 10 * vg.Inch
	figHeight = 8 * vg.Inch
	figDPI    = 96
)

// WritePNG draws the run's figure: on top the readings, the fitted curve, each
// target's line, interval band (earliest to latest) and observed crossing; below, the
// forecast history (predicted crossing and bounds against the time each forecast was
// made). Times are minutes since the run's start.
func WritePNG(w io.Writer, s Summary, readings []daq.Reading, fc *predict.Forecast) error {
	start := s.Run.Started
	top, err := readingsPlot(s, readings, fc)
	if err != nil {
		return fmt.Errorf("plot run %s: %w", s.Run.ID, err)
	}
	bottom, err := historyPlot(s, start)
	if err != nil {
		return fmt.Errorf("plot run %s: %w", s.Run.ID, err)
	}
	img := vgimg.NewWith(vgimg.UseWH(figWidth, figHeight), vgimg.UseDPI(figDPI))
	dc := draw.New(img)
	tiles := draw.Tiles{Rows: 2, Cols: 1, PadY: vg.Millimeter * 4, PadTop: vg.Millimeter * 2, PadBottom: vg.Millimeter * 2,
		PadLeft: vg.Millimeter * 2, PadRight: vg.Millimeter * 4}
	plots := [][]*plot.Plot{{top}, {bottom}}
	cs := plot.Align(plots, tiles, dc)
	top.Draw(cs[0][0])
	bottom.Draw(cs[1][0])
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(w); err != nil {
		return fmt.Errorf("write PNG of run %s: %w", s.Run.ID, err)
	}
	return nil
}

func minutes(t, start time.Time) float64 { return t.Sub(start).Minutes() }

func readingsPlot(s Summary, readings []daq.Reading, fc *predict.Forecast) (*plot.Plot, error) {
	start := s.Run.Started
	p := plot.New()
	p.Title.Text = fmt.Sprintf("Run %s — specimen %s on %s", s.Run.ID, s.Run.Specimen, s.Run.Channel)
	p.X.Label.Text = "minutes since " + start.UTC().Format("2006-01-02 15:04:05 UTC")
	p.Y.Label.Text = "temperature, °C"
	p.Add(plotter.NewGrid())
	p.Legend.Top = true

	pts := plotter.XYs{}
	lo, hi := math.Inf(1), math.Inf(-1)
	end := start
	for _, r := range readings {
		if !r.OK() || math.IsNaN(r.Celsius) || math.IsInf(r.Celsius, 0) {
			continue
		}
		pts = append(pts, plotter.XY{X: minutes(r.Time, start), Y: r.Celsius})
		lo, hi = math.Min(lo, r.Celsius), math.Max(hi, r.Celsius)
		if r.Time.After(end) {
			end = r.Time
		}
	}
	for _, t := range s.Targets {
		for _, v := range []*time.Time{t.Latest, t.Actual, t.PredictedAt} {
			if v != nil && v.After(end) {
				end = *v
			}
		}
		if t.Celsius != nil {
			lo, hi = math.Min(lo, *t.Celsius), math.Max(hi, *t.Celsius)
		}
	}
	if len(pts) > 0 {
		l, err := plotter.NewLine(pts)
		if err != nil {
			return nil, err
		}
		l.Color = color.Black
		p.Add(l)
		p.Legend.Add("readings", l)
	}
	if math.IsInf(lo, 0) {
		lo, hi = 0, 1
	}
	if err := addCurve(p, fc, start, end); err != nil {
		return nil, err
	}
	for i, t := range s.Targets {
		if err := addTarget(p, t, i, start, end, lo, hi); err != nil {
			return nil, err
		}
	}
	return p, nil
}

// addCurve samples the fitted curve over its segment up to end.
func addCurve(p *plot.Plot, fc *predict.Forecast, start, end time.Time) error {
	if fc == nil || fc.Curve == nil {
		return nil
	}
	from := fc.SegmentStart
	if from.Before(start) {
		from = start
	}
	if !end.After(from) {
		return nil
	}
	const n = 300
	xy := make(plotter.XYs, 0, n+1)
	for i := 0; i <= n; i++ {
		t := from.Add(time.Duration(float64(end.Sub(from)) * float64(i) / n))
		if v := fc.Curve(t); !math.IsNaN(v) && !math.IsInf(v, 0) {
			xy = append(xy, plotter.XY{X: minutes(t, start), Y: v})
		}
	}
	if len(xy) < 2 {
		return nil
	}
	l, err := plotter.NewLine(xy)
	if err != nil {
		return err
	}
	l.Color, l.Width, l.Dashes = color.RGBA{R: 200, A: 255}, vg.Points(1.5), []vg.Length{vg.Points(6), vg.Points(3)}
	p.Add(l)
	p.Legend.Add(fmt.Sprintf("fit (%s)", fc.Model), l)
	return nil
}

// addTarget draws a target's line, its interval band and its observed crossing.
func addTarget(p *plot.Plot, t TargetSummary, i int, start, end time.Time, lo, hi float64) error {
	if t.Celsius == nil {
		return nil
	}
	c := plotutil.Color(i + 1)
	line, err := plotter.NewLine(plotter.XYs{{X: 0, Y: *t.Celsius}, {X: minutes(end, start), Y: *t.Celsius}})
	if err != nil {
		return err
	}
	line.Color, line.Dashes = c, []vg.Length{vg.Points(2), vg.Points(2)}
	p.Add(line)
	p.Legend.Add(fmt.Sprintf("target %s (%.1f °C)", t.Name, *t.Celsius), line)
	if t.Earliest != nil && t.Latest != nil {
		a, b := minutes(*t.Earliest, start), minutes(*t.Latest, start)
		band, err := plotter.NewPolygon(plotter.XYs{{X: a, Y: lo}, {X: b, Y: lo}, {X: b, Y: hi}, {X: a, Y: hi}})
		if err != nil {
			return err
		}
		r, g, bl, _ := c.RGBA()
		band.Color = color.NRGBA{R: uint8(r >> 8), G: uint8(g >> 8), B: uint8(bl >> 8), A: 40}
		band.LineStyle.Width = 0
		p.Add(band)
	}
	if err := marker(p, t.PredictedAt, *t.Celsius, start, c, draw.RingGlyph{}, ""); err != nil {
		return err
	}
	label := "reached " + t.Name
	if t.ActualEstimated {
		label += " (estimated: in a gap of the readings)"
	}
	return marker(p, t.Actual, *t.Celsius, start, c, draw.CrossGlyph{}, label)
}

func marker(p *plot.Plot, at *time.Time, y float64, start time.Time, c color.Color, g draw.GlyphDrawer, label string) error {
	if at == nil {
		return nil
	}
	sc, err := plotter.NewScatter(plotter.XYs{{X: minutes(*at, start), Y: y}})
	if err != nil {
		return err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: c, Radius: vg.Points(5), Shape: g}
	p.Add(sc)
	if label != "" {
		p.Legend.Add(label, sc)
	}
	return nil
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
// lines: each prediction holds until the next stored one, the last until end.
func historySteps(t TargetSummary, start, end time.Time) (at, lo, hi plotter.XYs) {
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
		x0, x1 := minutes(h.Time, start), minutes(until, start)
		y := minutes(*h.PredictedAt, start)
		at = append(at, plotter.XY{X: x0, Y: y}, plotter.XY{X: x1, Y: y})
		if h.Earliest != nil && h.Latest != nil {
			a, b := minutes(*h.Earliest, start), minutes(*h.Latest, start)
			lo = append(lo, plotter.XY{X: x0, Y: a}, plotter.XY{X: x1, Y: a})
			hi = append(hi, plotter.XY{X: x0, Y: b}, plotter.XY{X: x1, Y: b})
		}
	}
	return at, lo, hi
}

// historyPlot draws each target's predicted crossing (with bounds) against the time
// the forecast was made, and its observed crossing as a horizontal line.
func historyPlot(s Summary, start time.Time) (*plot.Plot, error) {
	p := plot.New()
	p.Title.Text = "How the forecast converged"
	p.X.Label.Text = "forecast made at, minutes since start"
	p.Y.Label.Text = "predicted crossing, minutes since start"
	p.Add(plotter.NewGrid())
	p.Legend.Top = true
	any := false
	for i, t := range s.Targets {
		c := plotutil.Color(i + 1)
		at, lo, hi := historySteps(t, start, historyEnd(s, t))
		if len(at) > 0 {
			l, err := plotter.NewLine(at)
			if err != nil {
				return nil, err
			}
			l.Color = c
			p.Add(l)
			p.Legend.Add("predicted "+t.Name+" (dashed: interval)", l)
			any = true
		}
		for _, b := range []plotter.XYs{lo, hi} {
			if len(b) > 0 {
				l, err := plotter.NewLine(b)
				if err != nil {
					return nil, err
				}
				l.Color, l.Width, l.Dashes = c, vg.Points(0.5), []vg.Length{vg.Points(3), vg.Points(2)}
				p.Add(l)
			}
		}
		if t.Actual != nil && len(t.History) > 0 {
			y := minutes(*t.Actual, start)
			x0, x1 := minutes(t.History[0].Time, start), minutes(*t.Actual, start)
			l, err := plotter.NewLine(plotter.XYs{{X: x0, Y: y}, {X: math.Max(x1, x0+1e-3), Y: y}})
			if err != nil {
				return nil, err
			}
			l.Color, l.Width = c, vg.Points(2)
			p.Add(l)
			p.Legend.Add("observed "+t.Name, l)
		}
	}
	if !any {
		p.Title.Text += " (no forecast history recorded)"
	}
	return p, nil
}
