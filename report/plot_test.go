package report

import (
	"bytes"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/settle-lab/settle/predict"
)

var figT0 = time.Date(2026, 3, 4, 9, 0, 0, 0, time.UTC)

// figCase is a hand-made figure: readings that follow curve from placed on (room
// temperature before), a fit whose curve is NaN before the placement (as a fit of a
// later segment is), and one target with its interval.
type figCase struct {
	name     string
	curve    func(s float64) float64
	centre   func(s float64) float64 // nil: no centre curve
	target   FigureTarget
	placed   float64 // seconds: the specimen is placed
	until    float64 // seconds: the fit's cut-off; readings after it are faded
	duration float64
}

func (c figCase) figure() Figure {
	at := func(s float64) time.Time { return figT0.Add(time.Duration(s * float64(time.Second))) }
	fc := &predict.Forecast{Model: "lumped", FittedAt: at(c.until), Notes: []string{"Model mismatch: test note."}}
	fc.Curve = func(t time.Time) float64 {
		s := t.Sub(figT0).Seconds()
		if s < c.placed {
			return math.NaN()
		}
		return c.curve(s - c.placed)
	}
	if c.centre != nil {
		fc.Model = "conduction-series"
		fc.Centre = func(t time.Time) float64 {
			s := t.Sub(figT0).Seconds()
			if s < c.placed {
				return math.NaN()
			}
			return c.centre(s - c.placed)
		}
	}
	f := Figure{Title: "figure test: " + c.name, Origin: figT0, OriginLabel: "run start", Forecast: fc,
		Cutoff: at(c.until), Cautions: predict.HandlingCautions, Targets: []FigureTarget{c.target}}
	for s := 0.0; s <= c.duration; s += 20 {
		v := 21.0
		if s >= c.placed {
			v = c.curve(s - c.placed)
		}
		if int(s)%1000 == 500 {
			v = math.NaN() // a fault reading: the line breaks
		}
		f.Readings = append(f.Readings, Sample{Time: at(s), Celsius: v})
	}
	f.Targets[0].At, f.Targets[0].Earliest, f.Targets[0].Latest = at(c.target.At.Sub(time.Time{}).Seconds()), at(c.target.Earliest.Sub(time.Time{}).Seconds()), at(c.target.Latest.Sub(time.Time{}).Seconds())
	return f
}

// secs is a time.Time that figure() turns into figT0 + s.
func secs(s float64) time.Time { return time.Time{}.Add(time.Duration(s * float64(time.Second))) }

// TestFigurePixels renders a cooling, a heating and a surface-sensor figure and reads
// their pixels: the interval band is the premultiplied tint of its colour over the
// paper; no fit-coloured pixel lies left of the placement (no stray line from the
// corner when the fit's curve is NaN there); the centre curve is drawn where there is
// one; readings after the cut-off are faded. The PNGs go to $SETTLE_TEST_OUTPUT (else
// a temp dir) for people to look at.
func TestFigurePixels(t *testing.T) {
	cases := []figCase{
		{name: "cooling", placed: 900, until: 4000, duration: 6000,
			curve:  func(s float64) float64 { return 21 + 280*math.Exp(-s/1500) },
			target: FigureTarget{Name: "handle", Celsius: 50, Handling: true, State: "predicted", At: secs(4300), Earliest: secs(3900), Latest: secs(4700)}},
		{name: "heating", placed: 600, until: 3000, duration: 4000,
			curve:  func(s float64) float64 { return 850 - 830*math.Exp(-s/1200) },
			target: FigureTarget{Name: "soak", Celsius: 800, State: "predicted", At: secs(4300), Earliest: secs(3700), Latest: secs(5000)}},
		{name: "surface", placed: 300, until: 3000, duration: 5000,
			curve:  func(s float64) float64 { return 20 + 130*math.Exp(-s/1400) },
			centre: func(s float64) float64 { return 20 + 130*math.Min(1, 1.25*math.Exp(-s/1400)) },
			target: FigureTarget{Name: "handle", Celsius: 50, Handling: true, State: "predicted", At: secs(3200), Earliest: secs(2900), Latest: secs(3500)}},
	}
	dir := os.Getenv("SETTLE_TEST_OUTPUT")
	if dir == "" {
		dir = t.TempDir()
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f := c.figure()
			var buf bytes.Buffer
			w, h := 11*vg.Inch, 7.5*vg.Inch
			p, data, err := renderFigure(&buf, f, nil, w, h)
			if err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(filepath.Join(dir, "figure-"+c.name+".png"), buf.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
			img, err := png.Decode(bytes.NewReader(buf.Bytes()))
			if err != nil {
				t.Fatal(err)
			}
			px := pixelMap(p, data, img.Bounds().Dy())
			tg := f.Targets[0]
			sec := func(tm time.Time) float64 { return tm.Sub(figT0).Seconds() }
			checkBand(t, img, px, sec(tg.Earliest), sec(tg.Latest), p.Y.Min, p.Y.Max, BandColour(tg.Handling))
			// No fit colour left of the placement (a line from the corner would cross
			// that whole region).
			x0, _ := px(0, p.Y.Min)
			xp, _ := px(c.placed, p.Y.Min)
			_, ytop := px(0, p.Y.Max)
			_, ybot := px(0, p.Y.Min)
			if n := count(img, x0+2, xp-4, ytop, ybot, figFit); n > 0 {
				t.Errorf("%d pixels of the fit's colour left of the placement: a stray line", n)
			}
			if n := count(img, xp, img.Bounds().Dx(), ytop, ybot, figFit); n < 200 {
				t.Errorf("only %d pixels of the fit's colour after the placement", n)
			}
			xc, _ := px(c.until+200, p.Y.Min)
			if n := count(img, xc, img.Bounds().Dx(), ytop, ybot, figFaded); n < 30 {
				t.Errorf("readings after the cut-off: %d faded pixels", n)
			}
			centre := count(img, xp, img.Bounds().Dx(), ytop, ybot, figCentre)
			if (c.centre != nil) != (centre > 100) {
				t.Errorf("centre curve given %v, %d centre-coloured pixels", c.centre != nil, centre)
			}
		})
	}
}

// pixelMap returns the pixel of a data point (seconds since the origin, °C).
func pixelMap(p *plot.Plot, data draw.Canvas, height int) func(x, y float64) (int, int) {
	return func(x, y float64) (int, int) {
		cx, cy := data.X(p.X.Norm(x)), data.Y(p.Y.Norm(y))
		return int(math.Round(float64(cx) * figDPI / 72)), height - int(math.Round(float64(cy)*figDPI/72))
	}
}

// checkBand reads the middle column of the band between the plot's bottom and top and
// wants most pixels (those not under a grid or data line) to be the premultiplied
// band colour composited over the paper: out = band + paper·(1 − α).
func checkBand(t *testing.T, img image.Image, px func(x, y float64) (int, int), a, b, lo, hi float64, band color.RGBA) {
	t.Helper()
	x, _ := px((a+b)/2, lo)
	_, top := px(0, hi)
	_, bottom := px(0, lo)
	inv := 255 - float64(band.A)
	want := [3]float64{float64(band.R) + float64(figPaper.R)*inv/255, float64(band.G) + float64(figPaper.G)*inv/255, float64(band.B) + float64(figPaper.B)*inv/255}
	match, n := 0, 0
	for y := top + 3; y < bottom-3; y++ {
		r, g, bl, _ := img.At(x, y).RGBA()
		n++
		if math.Abs(float64(r>>8)-want[0]) <= 3 && math.Abs(float64(g>>8)-want[1]) <= 3 && math.Abs(float64(bl>>8)-want[2]) <= 3 {
			match++
		}
	}
	if n == 0 || float64(match) < 0.7*float64(n) {
		r, g, bl, _ := img.At(x, (top+bottom)/2).RGBA()
		t.Errorf("band column x=%d: %d of %d pixels are the band tint %.0f; middle pixel (%d,%d,%d)", x, match, n, want, r>>8, g>>8, bl>>8)
	}
	if band.R > band.A || band.G > band.A || band.B > band.A {
		t.Errorf("band colour %v is not premultiplied", band)
	}
}

// count counts pixels of colour c (±12 per channel) in [x0,x1)×[y0,y1).
func count(img image.Image, x0, x1, y0, y1 int, c color.RGBA) int {
	n := 0
	for y := y0; y < y1; y++ {
		for x := x0; x < x1; x++ {
			r, g, b, _ := img.At(x, y).RGBA()
			if absDiff(r>>8, c.R) <= 12 && absDiff(g>>8, c.G) <= 12 && absDiff(b>>8, c.B) <= 12 {
				n++
			}
		}
	}
	return n
}

func absDiff(a uint32, b uint8) uint32 {
	if a > uint32(b) {
		return a - uint32(b)
	}
	return uint32(b) - a
}

// TestHMLabels checks the h:mm tick labels and that the ticks never repeat a label.
func TestHMLabels(t *testing.T) {
	for s, want := range map[float64]string{0: "0:00", 59: "0:01", 3600: "1:00", 5400: "1:30", 36000 + 300: "10:05", -600: "-0:10"} {
		if got := HMLabel(s); got != want {
			t.Errorf("HMLabel(%g) = %q, want %q", s, got, want)
		}
	}
	for _, span := range []float64{120, 900, 5400, 30000, 200000} {
		seen := map[string]bool{}
		for _, tk := range (hmTicks{}).Ticks(0, span) {
			if tk.Label == "" {
				continue
			}
			if seen[tk.Label] {
				t.Errorf("span %g s: label %q twice", span, tk.Label)
			}
			seen[tk.Label] = true
		}
		if len(seen) < 2 || len(seen) > 9 {
			t.Errorf("span %g s: %d labels", span, len(seen))
		}
	}
}

// TestFigureCaption checks the caption's state lines: the late end to plan with for a
// handling target, an estimated crossing said so, and the cautions beside a handling
// target only.
func TestFigureCaption(t *testing.T) {
	at := func(s float64) time.Time { return figT0.Add(time.Duration(s * float64(time.Second))) }
	f := Figure{Origin: figT0, Cautions: predict.HandlingCautions, Targets: []FigureTarget{
		{Name: "handle", Celsius: 50, Handling: true, State: "predicted", At: at(3600), Earliest: at(3300), Latest: at(4200)},
		{Name: "cool", Celsius: 80, State: "reached", At: at(1800), Actual: at(1800), ActualEstimated: true},
	}}
	got := strings.Join(f.caption(), "\n")
	for _, want := range []string{
		"handling target handle 50.0 °C: predicted 1:00 (~90 % interval 0:55–1:10); plan with the late end, 1:10.",
		"target cool 80.0 °C: reached at 0:30; crossed at 0:30 (estimated from the fit: no reading there).",
		"No fitted model.",
		"Handling times are estimates: " + predict.HandlingCautions[0],
	} {
		if !strings.Contains(got, want) {
			t.Errorf("caption lacks %q:\n%s", want, got)
		}
	}
	f.Targets = f.Targets[1:]
	if strings.Contains(strings.Join(f.caption(), "\n"), "Handling times") {
		t.Error("cautions without a handling target")
	}
}
