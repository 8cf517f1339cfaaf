package material

import (
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// Every row: positive properties, emissivity in (0, 1], a source that names a book
// or says it is typical, and an honest "from memory" mark.
func TestTableRows(t *testing.T) {
	if len(Names()) < 13 {
		t.Fatalf("only %d materials", len(Names()))
	}
	for _, name := range Names() {
		m, ok := Lookup(name)
		if !ok {
			t.Fatalf("%q: not found by its own name", name)
		}
		if m.Name != name {
			t.Errorf("%q: Lookup returned %q", name, m.Name)
		}
		if !(m.Density > 0 && m.SpecificHeat > 0 && m.Conductivity > 0) {
			t.Errorf("%q: non-positive property %+v", name, m)
		}
		if !(m.Emissivity > 0 && m.Emissivity <= 1) {
			t.Errorf("%q: emissivity %g outside (0, 1]", name, m.Emissivity)
		}
		if !strings.Contains(m.Source, "from memory") ||
			!(strings.Contains(m.Source, "Incropera") || strings.Contains(m.Source, "typical")) {
			t.Errorf("%q: source %q does not name its origin honestly", name, m.Source)
		}
	}
}

// Diffusivities in plausible ranges (common practice: metals about 3e-6 to 1.2e-4
// m²/s, building materials, glass, wood and polymers about 5e-8 to 2e-6, dense
// ceramics and stone in between).
func TestDiffusivityRanges(t *testing.T) {
	cases := []struct {
		name   string
		lo, hi float64
	}{
		{"carbon steel", 1e-5, 2.5e-5},
		{"stainless steel 304", 3e-6, 5e-6},
		{"aluminium alloy 2024-T6", 5e-5, 9e-5},
		{"aluminium alloy 6061-T6", 5e-5, 9e-5},
		{"pure aluminium", 8e-5, 1.1e-4},
		{"copper", 1e-4, 1.3e-4},
		{"brass", 2.5e-5, 4e-5},
		{"cast iron", 1e-5, 2e-5},
		{"titanium alloy Ti-6Al-4V", 2e-6, 4e-6},
		{"lead", 2e-5, 3e-5},
		{"alumina", 5e-6, 2e-5},
		{"granite", 8e-7, 2e-6},
		{"concrete", 4e-7, 1e-6},
		{"mortar", 3e-7, 7e-7},
		{"common brick", 3e-7, 7e-7},
		{"soda-lime glass", 5e-7, 1e-6},
		{"oak", 1e-7, 2.5e-7},
		{"pine", 1e-7, 2.5e-7},
		{"PMMA", 8e-8, 1.5e-7},
		{"PTFE", 8e-8, 2e-7},
	}
	for _, c := range cases {
		m, ok := Lookup(c.name)
		if !ok {
			t.Errorf("%q: missing", c.name)
			continue
		}
		if a := m.Diffusivity(); a < c.lo || a > c.hi {
			t.Errorf("%q: α = %.3g m²/s, want %.1g..%.1g", c.name, a, c.lo, c.hi)
		}
	}
	if len(cases) != len(Names()) {
		t.Errorf("%d range cases for %d materials: every row needs a range", len(cases), len(Names()))
	}
}

// Aliases and spelling variants reach the right row; unknown names do not.
func TestLookupAliases(t *testing.T) {
	cases := map[string]string{
		"steel":             "carbon steel",
		"  Mild_Steel ":     "carbon steel",
		"AISI-304":          "stainless steel 304",
		"stainless":         "stainless steel 304",
		"aluminum":          "aluminium alloy 2024-T6",
		"6061-T6":           "aluminium alloy 6061-T6",
		"soda lime glass":   "soda-lime glass",
		"SODA_LIME_GLASS":   "soda-lime glass",
		"plexiglas":         "PMMA",
		"Teflon":            "PTFE",
		"brick":             "common brick",
		"wood":              "pine",
		"cement mortar":     "mortar",
		"Ti-6Al-4V":         "titanium alloy Ti-6Al-4V",
		"aluminium oxide":   "alumina",
		"cartridge   brass": "brass",
	}
	for in, want := range cases {
		m, ok := Lookup(in)
		if !ok || m.Name != want {
			t.Errorf("Lookup(%q) = %q, %v; want %q", in, m.Name, ok, want)
		}
	}
	for _, in := range []string{"", "unobtainium", "steel 4340", "-"} {
		if m, ok := Lookup(in); ok {
			t.Errorf("Lookup(%q) found %q", in, m.Name)
		}
	}
}

// The brass and stainless rows match the property values the worked examples use
// (Cengel & Ghajar 5th ed. Examples 4-4 and 4-5, inputs as quoted in
// shared/reference section 5 rows C4-4 and C4-5), read from the reference file.
func TestExampleProperties(t *testing.T) {
	path := filepath.Join("..", "..", "..", "shared", "reference", "reference-values.md")
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Skipf("reference values not available (%v)", err)
	}
	for id, name := range map[string]string{"C4-4": "brass", "C4-5": "stainless steel 304"} {
		line := ""
		for _, l := range strings.Split(string(raw), "\n") {
			if strings.HasPrefix(l, id+",") {
				line = l
			}
		}
		if line == "" {
			t.Fatalf("%s: row %s not found", path, id)
		}
		m, _ := Lookup(name)
		got := map[string]float64{"k": m.Conductivity, "rho": m.Density, "cp": m.SpecificHeat, "alpha": m.Diffusivity()}
		checked := 0
		for _, kv := range regexp.MustCompile(`\b(k|rho|cp|alpha) = ([0-9.]+(?:e-?[0-9]+)?)`).FindAllStringSubmatch(line, -1) {
			want, err := strconv.ParseFloat(kv[2], 64)
			if err != nil {
				t.Fatalf("%s row %s: %v", path, id, err)
			}
			// The books print 3 significant figures.
			if math.Abs(got[kv[1]]/want-1) > 5e-3 {
				t.Errorf("%s %s = %.4g, %s row %s says %g", name, kv[1], got[kv[1]], path, id, want)
			}
			checked++
		}
		if checked < 2 {
			t.Errorf("%s row %s: only %d properties found", path, id, checked)
		}
	}
}

// Lookup never panics, and whatever it finds is a valid row found again by its name.
func FuzzLookup(f *testing.F) {
	for _, s := range []string{"steel", "Soda-lime glass", "", "  ", "304", "ÄLU", "\xff\xfe", "a\x00b"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, name string) {
		m, ok := Lookup(name)
		if !ok {
			return
		}
		if again, ok := Lookup(m.Name); !ok || again != m {
			t.Fatalf("Lookup(%q) = %q, but its name does not find it again", name, m.Name)
		}
		if !(m.Density > 0 && m.Conductivity > 0 && m.SpecificHeat > 0) {
			t.Fatalf("Lookup(%q) = %+v", name, m)
		}
	})
}

// Each row's emissivity ranges hold the figures recalled for its surfaces, and the
// default is the middle of the oxidised range: metal taken out of a furnace is
// oxidised, not bright. Figures: total emissivity near room temperature to a few
// hundred °C, from Incropera et al. 6th ed. Table A.11 where it lists the surface
// (marked A.11) and typical handbook figures otherwise, all from memory and not
// checked against a printed page.
func TestEmissivityFinishes(t *testing.T) {
	cases := []struct {
		name             string
		bright, oxidised []float64 // recalled figures; nil: no such finish
	}{
		{"carbon steel", []float64{0.07, 0.2}, []float64{0.79, 0.8}},         // polished ~0.07; oxidised mild steel ~0.79
		{"stainless steel 304", []float64{0.17, 0.22}, []float64{0.57, 0.7}}, // A.11: polished ~0.17, cleaned ~0.22, highly oxidised ~0.7
		{"aluminium alloy 2024-T6", []float64{0.05}, []float64{0.11, 0.2}},   // A.11: foil ~0.05; oxidised at 600 °C ~0.11–0.19
		{"aluminium alloy 6061-T6", []float64{0.05}, []float64{0.11, 0.2}},   // as 2024 (no separate figure recalled)
		{"pure aluminium", []float64{0.04}, []float64{0.11, 0.19}},           // A.11: highly polished ~0.04; oxidised ~0.11–0.19
		{"copper", []float64{0.03}, []float64{0.57, 0.78}},                   // A.11: highly polished ~0.03, stably oxidised ~0.5–0.6; black oxidised ~0.78
		{"brass", []float64{0.03, 0.1}, []float64{0.5, 0.6}},                 // highly polished ~0.03, oxidised at 600 °C ~0.6
		{"cast iron", []float64{0.21, 0.44}, []float64{0.64, 0.95}},          // polished ~0.21, machined ~0.44; oxidised ~0.64–0.78, rough scale ~0.95
		{"titanium alloy Ti-6Al-4V", []float64{0.19}, []float64{0.5, 0.6}},   // polished ~0.19, oxidised at 540 °C ~0.6
		{"lead", []float64{0.06, 0.08}, []float64{0.28, 0.6}},                // polished ~0.06; grey oxidised ~0.28, oxidised at 200 °C ~0.6
		{"concrete", nil, []float64{0.88, 0.94}},                             // A.11: concrete ~0.88–0.93
		{"mortar", nil, []float64{0.9}},                                      // as plaster/cement ~0.9
		{"common brick", nil, []float64{0.93}},                               // A.11: brick, red ~0.93
		{"oak", nil, []float64{0.9}},                                         // A.11: wood ~0.82–0.92
		{"pine", nil, []float64{0.9}},                                        // as oak
		{"soda-lime glass", nil, []float64{0.9, 0.94}},                       // A.11: window glass ~0.90–0.95
		{"PMMA", nil, []float64{0.86, 0.94}},                                 // acrylic ~0.86–0.94
		{"PTFE", nil, []float64{0.85, 0.92}},                                 // PTFE ~0.85–0.92
		{"alumina", nil, []float64{0.7, 0.9}},                                // A.11: aluminium oxide ~0.69 at 600 K to ~0.9 near room temperature
		{"granite", nil, []float64{0.86, 0.9}},                               // rough stone ~0.86–0.93
	}
	if len(cases) != len(Names()) {
		t.Fatalf("%d emissivity cases for %d materials: every row needs one", len(cases), len(Names()))
	}
	in := func(r Range, x float64) bool { return r.Lo <= x && x <= r.Hi }
	for _, c := range cases {
		m, ok := Lookup(c.name)
		if !ok {
			t.Fatalf("%q: missing", c.name)
		}
		if m.Metal != (c.bright != nil) {
			t.Errorf("%q: metal %v, want %v", c.name, m.Metal, c.bright != nil)
		}
		for _, x := range c.bright {
			if !in(m.Bright, x) {
				t.Errorf("%q: bright range %v does not hold the recalled %g", c.name, m.Bright, x)
			}
		}
		for _, x := range c.oxidised {
			if !in(m.Oxidised, x) {
				t.Errorf("%q: oxidised range %v does not hold the recalled %g", c.name, m.Oxidised, x)
			}
		}
		if math.Abs(m.Emissivity-m.Oxidised.Mid()) > 0.006 || !strings.Contains(m.EmissivitySource, "from memory") {
			t.Errorf("%q: default emissivity %g, want the oxidised middle %g; source %q", c.name, m.Emissivity, m.Oxidised.Mid(), m.EmissivitySource)
		}
		if r, ok := m.Finish("oxidized"); !ok || r != m.Oxidised {
			t.Errorf("%q: Finish(oxidized) = %v, %v", c.name, r, ok)
		}
		if r, ok := m.Finish("bright"); ok != m.Metal || ok && r != m.Bright {
			t.Errorf("%q: Finish(bright) = %v, %v", c.name, r, ok)
		}
	}
	if _, ok := (Material{}).Finish("painted"); ok {
		t.Error("an unknown finish was found")
	}
}
