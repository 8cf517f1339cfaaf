package material

import (
	"math"
	"sort"
	"strings"
	"unicode"
)

// Material is one material's room-temperature properties.
type Material struct {
	// Name is the canonical name, e.g. "stainless steel 304".
	Name string
	// Density is ρ in kg/m³.
	Density float64
	// SpecificHeat is c (cp) in J/(kg·K).
	SpecificHeat float64
	// Conductivity is k in W/(m·K).
	Conductivity float64
	// Emissivity is the default total emissivity (0–1): the middle of Oxidised, the
	// state of a metal taken out of a furnace (for a non-metal, its only finish).
	Emissivity float64
	// Source names the handbook and table the values are from and whether they are
	// from memory.
	Source string
	// Metal says whether the material is a metal, whose emissivity depends mostly on
	// its finish: Bright (polished, bright-machined) or Oxidised (as heat-treated,
	// scaled). A non-metal has no Bright range; Oxidised is its surface as found.
	Metal            bool
	Bright, Oxidised Range
	// EmissivitySource names the handbook the emissivity ranges are from and whether
	// they are from memory.
	EmissivitySource string
}

// Range is a range of total emissivity, near room temperature to a few hundred °C.
type Range struct{ Lo, Hi float64 }

// Mid returns the middle of the range.
func (r Range) Mid() float64 { return (r.Lo + r.Hi) / 2 }

// Finish returns the emissivity range of a finish: "bright" or "oxidised" (also
// "oxidized"); false for an unknown finish or a non-metal's "bright".
func (m Material) Finish(name string) (Range, bool) {
	switch normalize(name) {
	case "bright", "polished":
		return m.Bright, m.Metal
	case "oxidised", "oxidized", "as heat treated", "scaled":
		return m.Oxidised, true
	}
	return Range{}, false
}

// Diffusivity returns the thermal diffusivity α = k/(ρ·c) in m²/s.
func (m Material) Diffusivity() float64 {
	return m.Conductivity / (m.Density * m.SpecificHeat)
}

// entry is a table row with its aliases.
type entry struct {
	Material
	aliases []string
}

const (
	incA1   = "Incropera 6th ed. Table A.1 (300 K), from memory"
	incA2   = "Incropera 6th ed. Table A.2 (300 K), from memory"
	incA3   = "Incropera 6th ed. Table A.3 (300 K), from memory"
	typical = "typical handbook/data-sheet value, from memory (no single table)"
	a11     = "emissivity ranges: Incropera 6th ed. Table A.11 where it lists the surface, else typical handbook ranges; from memory, ranges widened where memory is unsure"
)

// table is the built-in list. Where a book gives a different figure, the Source says
// which one is used.
var table = withFinishes([]entry{
	{Material{Name: "carbon steel", Density: 7854, SpecificHeat: 434, Conductivity: 60.5,
		Source: incA1 + ", plain carbon steel (Mn ≤ 1 %, Si ≤ 0.1 %)"},
		[]string{"steel", "mild steel", "plain carbon steel", "low carbon steel"}},
	{Material{Name: "stainless steel 304", Density: 7900, SpecificHeat: 477, Conductivity: 14.9,
		Source: incA1 + ", AISI 304"},
		[]string{"stainless", "stainless steel", "304", "aisi 304", "ss304", "inox"}},
	{Material{Name: "aluminium alloy 2024-T6", Density: 2770, SpecificHeat: 875, Conductivity: 177,
		Source: incA1 + ", 2024-T6"},
		[]string{"aluminium", "aluminum", "aluminum alloy", "aluminium alloy", "2024", "2024-t6", "duralumin"}},
	{Material{Name: "aluminium alloy 6061-T6", Density: 2700, SpecificHeat: 896, Conductivity: 167,
		Source: typical + ", 6061-T6"},
		[]string{"6061", "6061-t6", "aluminum 6061"}},
	{Material{Name: "pure aluminium", Density: 2702, SpecificHeat: 903, Conductivity: 237,
		Source: incA1 + ", pure aluminium"},
		[]string{"pure aluminum"}},
	{Material{Name: "copper", Density: 8933, SpecificHeat: 385, Conductivity: 401,
		Source: incA1 + ", pure copper"},
		[]string{"cu", "pure copper"}},
	{Material{Name: "brass", Density: 8530, SpecificHeat: 380, Conductivity: 110,
		Source: incA1 + ", cartridge brass 70Cu-30Zn"},
		[]string{"cartridge brass", "70/30 brass"}},
	{Material{Name: "cast iron", Density: 7200, SpecificHeat: 460, Conductivity: 52,
		Source: typical + ", grey cast iron (grades vary: k about 40–55 W/mK)"},
		[]string{"grey cast iron", "gray cast iron"}},
	{Material{Name: "concrete", Density: 2300, SpecificHeat: 880, Conductivity: 1.4,
		Source: incA3 + ", concrete (stone mix), dry"},
		[]string{"stone concrete"}},
	{Material{Name: "mortar", Density: 1860, SpecificHeat: 780, Conductivity: 0.72,
		Source: incA3 + ", cement mortar"},
		[]string{"cement mortar"}},
	{Material{Name: "common brick", Density: 1920, SpecificHeat: 835, Conductivity: 0.72,
		Source: incA3 + ", brick, common"},
		[]string{"brick"}},
	{Material{Name: "oak", Density: 720, SpecificHeat: 1255, Conductivity: 0.16,
		Source: incA3 + ", hardwoods (oak, maple), across the grain"},
		[]string{"hardwood", "oak wood", "maple"}},
	{Material{Name: "pine", Density: 510, SpecificHeat: 1380, Conductivity: 0.12,
		Source: incA3 + ", softwoods (fir, pine), across the grain"},
		[]string{"softwood", "wood", "fir", "pine wood"}},
	{Material{Name: "soda-lime glass", Density: 2500, SpecificHeat: 750, Conductivity: 1.4,
		Source: incA3 + ", glass, plate (soda lime)"},
		[]string{"glass", "plate glass", "window glass"}},
	{Material{Name: "PMMA", Density: 1190, SpecificHeat: 1470, Conductivity: 0.19,
		Source: typical + ", cast acrylic"},
		[]string{"acrylic", "perspex", "plexiglass", "plexiglas", "polymethyl methacrylate"}},
	{Material{Name: "PTFE", Density: 2200, SpecificHeat: 1050, Conductivity: 0.25,
		Source: typical + " (Incropera 6th ed. Table A.3 gives k 0.35 W/mK for Teflon, also from memory: sources spread)"},
		[]string{"teflon", "polytetrafluoroethylene"}},
	{Material{Name: "titanium alloy Ti-6Al-4V", Density: 4430, SpecificHeat: 526, Conductivity: 6.7,
		Source: typical + ", Ti-6Al-4V annealed"},
		[]string{"ti64", "ti-6al-4v", "grade 5 titanium"}},
	{Material{Name: "lead", Density: 11340, SpecificHeat: 129, Conductivity: 35.3,
		Source: incA1 + ", pure lead"},
		[]string{"pb"}},
	{Material{Name: "alumina", Density: 3970, SpecificHeat: 765, Conductivity: 36.0,
		Source: incA2 + ", aluminium oxide, polycrystalline"},
		[]string{"aluminium oxide", "aluminum oxide", "al2o3"}},
	{Material{Name: "granite", Density: 2630, SpecificHeat: 775, Conductivity: 2.79,
		Source: incA3 + ", granite (Barre)"},
		nil},
})

// finishes gives each row's emissivity ranges, bright then oxidised (metals), or the
// surface as found (non-metals: bright is zero).
var finishes = map[string][2]Range{
	"carbon steel":             {{0.07, 0.25}, {0.70, 0.90}},
	"stainless steel 304":      {{0.15, 0.30}, {0.50, 0.85}},
	"aluminium alloy 2024-T6":  {{0.04, 0.10}, {0.10, 0.30}},
	"aluminium alloy 6061-T6":  {{0.04, 0.10}, {0.10, 0.30}},
	"pure aluminium":           {{0.03, 0.08}, {0.10, 0.30}},
	"copper":                   {{0.02, 0.07}, {0.50, 0.80}},
	"brass":                    {{0.03, 0.10}, {0.40, 0.65}},
	"cast iron":                {{0.20, 0.45}, {0.60, 0.95}},
	"titanium alloy Ti-6Al-4V": {{0.10, 0.30}, {0.45, 0.80}},
	"lead":                     {{0.05, 0.10}, {0.25, 0.60}},
	"concrete":                 {{}, {0.85, 0.95}},
	"mortar":                   {{}, {0.85, 0.95}},
	"common brick":             {{}, {0.85, 0.95}},
	"oak":                      {{}, {0.85, 0.95}},
	"pine":                     {{}, {0.85, 0.95}},
	"soda-lime glass":          {{}, {0.90, 0.94}},
	"PMMA":                     {{}, {0.85, 0.95}},
	"PTFE":                     {{}, {0.85, 0.95}},
	"alumina":                  {{}, {0.70, 0.90}},
	"granite":                  {{}, {0.85, 0.95}},
}

// withFinishes fills each row's emissivity ranges and default from finishes.
func withFinishes(rows []entry) []entry {
	for i := range rows {
		f, ok := finishes[rows[i].Name]
		if !ok {
			panic("material: no emissivity ranges for " + rows[i].Name)
		}
		m := &rows[i].Material
		m.Bright, m.Oxidised, m.Metal = f[0], f[1], f[0].Hi > 0
		m.Emissivity = math.Round(100*f[1].Mid()) / 100
		m.EmissivitySource = a11
	}
	return rows
}

// index maps every normalized name and alias to its row.
var index = buildIndex()

func buildIndex() map[string]int {
	idx := make(map[string]int)
	for i, e := range table {
		for _, n := range append([]string{e.Name}, e.aliases...) {
			key := normalize(n)
			if j, dup := idx[key]; dup && j != i {
				panic("material: name " + n + " used twice")
			}
			idx[key] = i
		}
	}
	return idx
}

// normalize lowercases a name and turns every run of characters other than letters
// and digits into one space, so "Soda-lime glass", "soda lime  glass" and
// "SODA_LIME_GLASS" are the same.
func normalize(name string) string {
	var b strings.Builder
	space := false
	for _, r := range strings.ToLower(name) {
		if unicode.IsLetter(r) || unicode.IsDigit(r) {
			if space && b.Len() > 0 {
				b.WriteByte(' ')
			}
			b.WriteRune(r)
			space = false
		} else {
			space = true
		}
	}
	return b.String()
}

// Lookup returns the material with the given name or alias ("steel", "304",
// "aluminum", "acrylic", …), ignoring case, spaces and punctuation.
func Lookup(name string) (Material, bool) {
	i, ok := index[normalize(name)]
	if !ok {
		return Material{}, false
	}
	return table[i].Material, true
}

// Names returns the canonical names of all materials, sorted.
func Names() []string {
	names := make([]string, len(table))
	for i, e := range table {
		names[i] = e.Name
	}
	sort.Strings(names)
	return names
}
