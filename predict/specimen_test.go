package predict

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestLoadSpecimen(t *testing.T) {
	bar, err := LoadSpecimen("../testdata/predict/specimen/steel-bar.yaml")
	if err != nil {
		t.Fatal(err)
	}
	// The named material fills the properties (predict/material's carbon steel row).
	if bar.Material.Density != 7854 || bar.Material.Conductivity != 60.5 || bar.Material.Emissivity != 0.8 {
		t.Errorf("carbon steel resolved to %+v", bar.Material)
	}
	// V/A of a finite cylinder with its ends: r·L/(2(L+r)).
	if lc, want := bar.CharLength(), 0.02*0.3/(2*0.32); math.Abs(lc-want) > 1e-12 {
		t.Errorf("Lc = %g, want %g", lc, want)
	}
	brick, err := LoadSpecimen("../testdata/predict/specimen/brick.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if brick.CharLength() != 0.0325 || brick.HeatCapacityPerArea() != 1920*835*0.0325 {
		t.Errorf("brick Lc %g, C %g", brick.CharLength(), brick.HeatCapacityPerArea())
	}
	// Bi = h·Lc/k: 10 W/m²K on the brick is 10·0.0325/0.72 = 0.451.
	if bi := brick.Biot(10); math.Abs(bi-0.4514) > 1e-4 {
		t.Errorf("brick Bi at h = 10: %g, want 0.4514", bi)
	}
}

func TestParseSpecimenErrors(t *testing.T) {
	cases := map[string]string{
		"shape: cube\nsize_m: 0.1\nsensor: center\nmaterial: {name: copper}":                             "shape:",
		"shape: slab\nsize_m: -1\nsensor: center\nmaterial: {name: copper}":                              "size_m:",
		"shape: slab\nsize_m: 0.1\nsensor: middle\nmaterial: {name: copper}":                             "sensor:",
		"shape: slab\nsize_m: 0.1\nsensor: center\nmaterial: {name: unobtainium}":                        "material.name:",
		"shape: slab\nsize_m: 0.1\nsensor: center\nmaterial: {density_kg_m3: 1}":                         "material.specific_heat_j_kgk:",
		"shape: slab\nsize_m: 0.1\nsensor: center\nmaterial: {name: copper, emissivity: 2}":              "material.emissivity:",
		"shape: slab\nsize_m: 0.1\nsensor: center\ncolour: red\nmaterial: {name: copper}":                "colour",
		"shape: slab\nsize_m: 0.1\nlength_m: -2\nsensor: center\nmaterial: {name: copper}":               "length_m:",
		"shape: sphere\nsize_m: 0.1\nsensor: surface\nmaterial: {name: copper, conductivity_w_mk: .inf}": "conductivity_w_mk",
		"shape: [slab]": "line 1: shape: want a string, got a list",
	}
	for in, want := range cases {
		if _, err := ParseSpecimen([]byte(in)); err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("%q: err %v, want one naming %q", in, err, want)
		}
	}
	if _, err := LoadSpecimen(filepath.Join(t.TempDir(), "none.yaml")); err == nil || !strings.Contains(err.Error(), "none.yaml") {
		t.Errorf("missing file: err %v, want one naming the file", err)
	}
}

// FuzzParseSpecimen: no input may panic; an accepted specimen has finite, positive
// derived quantities. Seeds: testdata/predict/specimen/*.yaml.
func FuzzParseSpecimen(f *testing.F) {
	seeds, _ := filepath.Glob("../testdata/predict/specimen/*.yaml")
	for _, s := range seeds {
		b, err := os.ReadFile(s)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Add([]byte("shape: sphere\nsize_m: 1e-300\nsensor: center\nmaterial: {name: lead}"))
	f.Fuzz(func(t *testing.T, b []byte) {
		s, err := ParseSpecimen(b)
		if err != nil {
			return
		}
		if c := s.HeatCapacityPerArea(); !(c > 0) || math.IsInf(c, 0) {
			if s.CharLength() > 0 && !math.IsInf(c, 0) {
				t.Errorf("accepted %+v with heat capacity per area %g", s, c)
			}
		}
		if g, l := s.Convection(); !(l > 0) {
			t.Errorf("accepted %+v with convection length %g (%v)", s, l, g)
		}
	})
}

func TestReadCurveCSV(t *testing.T) {
	b, err := os.ReadFile("../testdata/predict/curves/faults.csv")
	if err != nil {
		t.Fatal(err)
	}
	c, err := ReadCurveCSV(bytes.NewReader(b), "faults.csv")
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Times) != 5 || !math.IsNaN(c.Celsius[1]) || !math.IsNaN(c.Celsius[3]) || c.Celsius[4] != 172.9 {
		t.Errorf("read %v %v, want 5 rows with rows 2 and 4 missing", c.Times, c.Celsius)
	}
	amb := c.FilledAmbient()
	if amb[2] != 21.0 || amb[4] != 21.1 {
		t.Errorf("filled ambient %v, want the gap at row 3 carried from row 2", amb)
	}
	if u := c.Until(10); len(u.Times) != 3 || len(u.Ambient) != 3 {
		t.Errorf("Until(10) kept %d rows, want 3", len(u.Times))
	}
	for in, want := range map[string]string{
		"t,temp\n1,2\n":          "must name a time column in seconds (t_s, or elapsed_s",
		"t_s,temp_c\n2,1\n1,1\n": "line 3: t_s 1 is before",
		"":                       "header",
	} {
		if _, err := ReadCurveCSV(strings.NewReader(in), "x.csv"); err == nil || !strings.Contains(err.Error(), want) || !strings.Contains(err.Error(), "x.csv") {
			t.Errorf("%q: err %v, want one naming x.csv and %q", in, err, want)
		}
	}
}

// FuzzReadCurveCSV: no input may panic; accepted curves have ordered, finite times and
// temperatures that are finite or NaN. Seeds: testdata/predict/curves/*.csv and the
// scipy curve.
func FuzzReadCurveCSV(f *testing.F) {
	seeds, _ := filepath.Glob("../testdata/predict/curves/*.csv")
	for _, s := range append(seeds, "../testdata/predict/curvefit_curve.csv") {
		b, err := os.ReadFile(s)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b[:min(len(b), 2000)])
	}
	// The other members of the dialect family: ';' with decimal commas, and an export.
	f.Add([]byte("\ufefft_s;temp_c;ambient_c\r\n0;200,5;21\r\n5;190,25;\r\nfoo;1;2\r\n"))
	f.Add([]byte("time,elapsed_s,channel,logger,celsius,status,raw\r\n2026-03-14T09:00:00.000Z,0.000,a,b,150.5,ok,150.5\r\n" +
		"2026-03-14T09:00:10.000Z,10.000,a,b,,open,\"OPEN,TC\"\r\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		c, err := ReadCurveCSV(bytes.NewReader(b), "fuzz")
		if err != nil {
			return
		}
		for i, tt := range c.Times {
			if math.IsNaN(tt) || math.IsInf(tt, 0) || i > 0 && tt < c.Times[i-1] {
				t.Fatalf("time %d = %g after %v", i, tt, c.Times[:i])
			}
			if math.IsInf(c.Celsius[i], 0) {
				t.Fatalf("infinite temperature at %d", i)
			}
		}
		if len(c.Malformed) > MaxMalformed || len(c.Malformed) > c.MalformedRows {
			t.Fatalf("%d malformed rows listed of %d", len(c.Malformed), c.MalformedRows)
		}
		// Whatever was read must go through the engine without a panic.
		p, _, _ := Prepare(c.Times, c.Celsius, c.FilledAmbient())
		Analyze(p, t0, []Target{{Name: "x", Celsius: 50}}, AnalyzeOptions{})
	})
}

// A named metal without an emissivity takes the oxidised middle (out of a furnace);
// finish: bright takes the bright one; an emissivity given wins; a finish the material
// does not have, or one without a material name, is refused naming the key.
func TestSpecimenFinish(t *testing.T) {
	for _, c := range []struct {
		yaml string
		want float64
		err  string
	}{
		{"material: {name: copper}", 0.65, ""},
		{"material: {name: copper, finish: bright}", 0.05, ""}, // middle of 0.02–0.07, rounded
		{"material: {name: copper, finish: oxidised, emissivity: 0.3}", 0.3, ""},
		{"material: {name: concrete, finish: bright}", 0, "material.finish"},
		{"material: {density_kg_m3: 7800, specific_heat_j_kgk: 450, conductivity_w_mk: 50, finish: oxidised}", 0, "material.finish"},
	} {
		sp, err := ParseSpecimen([]byte("shape: sphere\nsize_m: 0.01\nsensor: center\n" + c.yaml + "\n"))
		if c.err != "" {
			if err == nil || !strings.Contains(err.Error(), c.err) {
				t.Errorf("%s: error %v, want one naming %s", c.yaml, err, c.err)
			}
			continue
		}
		if err != nil || math.Abs(sp.Material.Emissivity-c.want) > 1e-9 {
			t.Errorf("%s: emissivity %g, err %v; want %g", c.yaml, sp.Material.Emissivity, err, c.want)
		}
	}
}
