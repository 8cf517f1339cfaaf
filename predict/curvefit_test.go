package predict

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"testing"
)

// golden holds the parameters scipy.optimize.curve_fit found for the curve in
// testdata/predict/curvefit_curve.csv (written by testdata/predict/curvefit.py).
type golden struct {
	Source  string  `json:"source"`
	Ambient float64 `json:"ambient_c"`
	Excess  float64 `json:"initial_excess_c"`
	Tau     float64 `json:"tau_s"`
}

func readGolden(t *testing.T, path string) golden {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var g golden
	if err := json.Unmarshal(b, &g); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return g
}

// readCurve reads a t_s,temp_c CSV with a header.
func readCurve(t testing.TB, path string) LumpedProblem {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	var p LumpedProblem
	for i, row := range rows[1:] {
		tt, err1 := strconv.ParseFloat(row[0], 64)
		c, err2 := strconv.ParseFloat(row[1], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("%s row %d: %v %v", path, i+2, err1, err2)
		}
		p.Times, p.Celsius = append(p.Times, tt), append(p.Celsius, c)
	}
	return p
}

// compareGolden checks a fit of the curve against scipy's curve_fit to 1e-6 relative.
func compareGolden(t *testing.T, p LumpedProblem, g golden) {
	t.Helper()
	r, err := FitLumped(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{{"ambient", r.Ambient, g.Ambient}, {"excess", r.Excess, g.Excess}, {"tau", r.Tau, g.Tau}} {
		if math.Abs(c.got-c.want) > 1e-6*math.Abs(c.want) {
			t.Errorf("%s = %.10g, want %.10g (%s) to 1e-6 relative", c.name, c.got, c.want, g.Source)
		}
	}
}

// The golden values are scipy.optimize.curve_fit's (Levenberg–Marquardt, tight
// tolerances) on the committed curve; see testdata/predict/curvefit.py.
func TestFitLumpedCurveFitGolden(t *testing.T) {
	p := readCurve(t, "../testdata/predict/curvefit_curve.csv")
	if len(p.Times) != 2000 {
		t.Fatalf("curve has %d points, want 2000", len(p.Times))
	}
	compareGolden(t, p, readGolden(t, "../testdata/predict/curvefit_golden.json"))
}

// scipyPython returns Debian's python3 when it can import scipy and numpy; otherwise
// it skips, or fails under CI=true, where .ci/run installs python3-scipy and
// python3-numpy and the comparison must run.
func scipyPython(t testing.TB) string {
	t.Helper()
	const py = "/usr/bin/python3"
	out, err := exec.Command(py, "-c", "import scipy, numpy").CombinedOutput()
	if err == nil {
		return py
	}
	msg := fmt.Sprintf("%s cannot import scipy and numpy (Debian packages python3-scipy, python3-numpy): %v: %s",
		py, err, bytes.TrimSpace(out))
	if os.Getenv("CI") == "true" {
		t.Fatal(msg)
	}
	t.Skip(msg)
	return ""
}

// Re-runs testdata/predict/curvefit.py into a temp dir: the script must reproduce the
// committed curve and golden values, and our fit must agree with the fresh ones.
func TestCurveFitScriptReproduces(t *testing.T) {
	if testing.Short() {
		t.Skip("runs scipy; skipped with -short")
	}
	py := scipyPython(t)
	dir := t.TempDir()
	out, err := exec.Command(py, "../testdata/predict/curvefit.py", dir).CombinedOutput()
	if err != nil {
		t.Fatalf("curvefit.py: %v\n%s", err, out)
	}
	t.Logf("%s", bytes.SplitN(out, []byte("\n"), 2)[0])
	fresh, err := os.ReadFile(filepath.Join(dir, "curvefit_curve.csv"))
	if err != nil {
		t.Fatal(err)
	}
	committed, err := os.ReadFile("../testdata/predict/curvefit_curve.csv")
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(fresh, committed) {
		t.Error("curvefit.py wrote a different curve than the committed one")
	}
	g, want := readGolden(t, filepath.Join(dir, "curvefit_golden.json")), readGolden(t, "../testdata/predict/curvefit_golden.json")
	for _, c := range [][2]float64{{g.Ambient, want.Ambient}, {g.Excess, want.Excess}, {g.Tau, want.Tau}} {
		if math.Abs(c[0]-c[1]) > 1e-9*math.Abs(c[1]) {
			t.Errorf("fresh golden %.12g, committed %.12g", c[0], c[1])
		}
	}
	compareGolden(t, readCurve(t, filepath.Join(dir, "curvefit_curve.csv")), g)
}

// The chained decay factors of equally spaced times must match exp(−t/τ) at every
// length, including the block tails.
func TestDecayMatchesExp(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	for n := 1; n < 300; n++ {
		p := synth(rng, max(n, 2), 100, 0, 1, 10, 0, 0)
		v := newProjection(&p)
		v.decay(7)
		for i, tt := range p.Times {
			if want := math.Exp(-tt / 7); math.Abs(v.e[i]-want) > 1e-14 {
				t.Fatalf("n=%d: e[%d] = %.17g, want %.17g", n, i, v.e[i], want)
			}
		}
		v.release()
	}
}

// BenchmarkFitLumpedCurveFit fits the 2,000-point curve that testdata/predict/curvefit.py
// times scipy's curve_fit on. It reports CPU time per fit (cpu-ns/op) besides wall
// time, because on a shared machine wall time mostly measures the neighbours; the
// script prints curve_fit's CPU time for comparison.
func BenchmarkFitLumpedCurveFit(b *testing.B) {
	p := readCurve(b, "../testdata/predict/curvefit_curve.csv")
	b.ReportAllocs()
	c0 := cpuTime()
	for b.Loop() {
		if _, err := FitLumped(p, nil); err != nil {
			b.Fatal(err)
		}
	}
	if c := cpuTime() - c0; c > 0 {
		b.ReportMetric(float64(c.Nanoseconds())/float64(b.N), "cpu-ns/op")
	}
}

// BenchmarkFitLumpedVsCurveFit times FitLumped and scipy's curve_fit on the same
// 2,000-point curve in one run: testdata/predict/curvefit.py --time first reports
// curve_fit's CPU time per fit as the script sets it up (its own start, numerical
// Jacobian), with the analytic Jacobian, and well started (at the parameters the
// curve was made with, analytic Jacobian), then FitLumped runs; the metrics are the
// CPU times per fit and their ratios to FitLumped's (x-default, x-jacobian,
// x-well-started). Skipped without scipy.
func BenchmarkFitLumpedVsCurveFit(b *testing.B) {
	py := scipyPython(b)
	const csv = "../testdata/predict/curvefit_curve.csv"
	out, err := exec.Command(py, "../testdata/predict/curvefit.py", "--time", csv, "200").Output()
	if err != nil {
		b.Fatalf("curvefit.py --time: %v", err)
	}
	var cf struct {
		Default     float64 `json:"default"`
		Jacobian    float64 `json:"jacobian"`
		WellStarted float64 `json:"well_started"`
	}
	if err := json.Unmarshal(out, &cf); err != nil {
		b.Fatalf("curvefit.py --time printed %q: %v", out, err)
	}
	p := readCurve(b, csv)
	b.ReportAllocs()
	c0 := cpuTime()
	for b.Loop() {
		if _, err := FitLumped(p, nil); err != nil {
			b.Fatal(err)
		}
	}
	c := cpuTime() - c0
	if c <= 0 {
		return
	}
	us := float64(c.Nanoseconds()) / 1e3 / float64(b.N)
	b.ReportMetric(us*1e3, "cpu-ns/op")
	b.ReportMetric(cf.Default, "curvefit-default-us")
	b.ReportMetric(cf.Jacobian, "curvefit-jacobian-us")
	b.ReportMetric(cf.WellStarted, "curvefit-well-started-us")
	b.ReportMetric(cf.Default/us, "x-default")
	b.ReportMetric(cf.Jacobian/us, "x-jacobian")
	b.ReportMetric(cf.WellStarted/us, "x-well-started")
}
