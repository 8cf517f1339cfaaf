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
