package material

import (
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
	// Emissivity is a typical total hemispherical emissivity (0–1) of the surface
	// state named in Source; real surfaces vary widely.
	Emissivity float64
	// Source names the handbook and table the values are from and whether they are
	// from memory.
	Source string
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
	emis    = "emissivity: typical value, from memory (cf. Incropera Table A.11)"
)

// table is the built-in list. Where a book gives a different figure, the Source says
// which one is used.
var table = []entry{
	{Material{"carbon steel", 7854, 434, 60.5, 0.80,
		incA1 + ", plain carbon steel (Mn ≤ 1 %, Si ≤ 0.1 %); " + emis + ", oxidized/scaled surface"},
		[]string{"steel", "mild steel", "plain carbon steel", "low carbon steel"}},
	{Material{"stainless steel 304", 7900, 477, 14.9, 0.40,
		incA1 + ", AISI 304; " + emis + ", as-received to lightly oxidized (polished ~0.15)"},
		[]string{"stainless", "stainless steel", "304", "aisi 304", "ss304", "inox"}},
	{Material{"aluminium alloy 2024-T6", 2770, 875, 177, 0.10,
		incA1 + ", 2024-T6; " + emis + ", unpolished rolled surface (anodized ~0.8)"},
		[]string{"aluminium", "aluminum", "aluminum alloy", "aluminium alloy", "2024", "2024-t6", "duralumin"}},
	{Material{"aluminium alloy 6061-T6", 2700, 896, 167, 0.10,
		typical + ", 6061-T6; " + emis + ", unpolished (anodized ~0.8)"},
		[]string{"6061", "6061-t6", "aluminum 6061"}},
	{Material{"pure aluminium", 2702, 903, 237, 0.08,
		incA1 + ", pure aluminium; " + emis + ", unpolished"},
		[]string{"pure aluminum"}},
	{Material{"copper", 8933, 385, 401, 0.10,
		incA1 + ", pure copper; " + emis + ", lightly tarnished (polished ~0.03, heavily oxidized ~0.7)"},
		[]string{"cu", "pure copper"}},
	{Material{"brass", 8530, 380, 110, 0.20,
		incA1 + ", cartridge brass 70Cu-30Zn; " + emis + ", dull surface (polished ~0.05)"},
		[]string{"cartridge brass", "70/30 brass"}},
	{Material{"cast iron", 7200, 460, 52, 0.80,
		typical + ", grey cast iron (grades vary: k about 40–55 W/mK); " + emis + ", as-cast/oxidized"},
		[]string{"grey cast iron", "gray cast iron"}},
	{Material{"concrete", 2300, 880, 1.4, 0.90,
		incA3 + ", concrete (stone mix), dry; " + emis},
		[]string{"stone concrete"}},
	{Material{"mortar", 1860, 780, 0.72, 0.90,
		incA3 + ", cement mortar; " + emis},
		[]string{"cement mortar"}},
	{Material{"common brick", 1920, 835, 0.72, 0.90,
		incA3 + ", brick, common; " + emis},
		[]string{"brick"}},
	{Material{"oak", 720, 1255, 0.16, 0.90,
		incA3 + ", hardwoods (oak, maple), across the grain; " + emis},
		[]string{"hardwood", "oak wood", "maple"}},
	{Material{"pine", 510, 1380, 0.12, 0.90,
		incA3 + ", softwoods (fir, pine), across the grain; " + emis},
		[]string{"softwood", "wood", "fir", "pine wood"}},
	{Material{"soda-lime glass", 2500, 750, 1.4, 0.92,
		incA3 + ", glass, plate (soda lime); " + emis},
		[]string{"glass", "plate glass", "window glass"}},
	{Material{"PMMA", 1190, 1470, 0.19, 0.90,
		typical + ", cast acrylic; " + emis + ", plastics in general"},
		[]string{"acrylic", "perspex", "plexiglass", "plexiglas", "polymethyl methacrylate"}},
	{Material{"PTFE", 2200, 1050, 0.25, 0.90,
		typical + " (Incropera 6th ed. Table A.3 gives k 0.35 W/mK for Teflon, also from memory: sources spread); " + emis},
		[]string{"teflon", "polytetrafluoroethylene"}},
	{Material{"titanium alloy Ti-6Al-4V", 4430, 526, 6.7, 0.30,
		typical + ", Ti-6Al-4V annealed; " + emis + ", lightly oxidized"},
		[]string{"ti64", "ti-6al-4v", "grade 5 titanium"}},
	{Material{"lead", 11340, 129, 35.3, 0.30,
		incA1 + ", pure lead; " + emis + ", oxidized"},
		[]string{"pb"}},
	{Material{"alumina", 3970, 765, 36.0, 0.80,
		incA2 + ", aluminium oxide, polycrystalline; " + emis},
		[]string{"aluminium oxide", "aluminum oxide", "al2o3"}},
	{Material{"granite", 2630, 775, 2.79, 0.90,
		incA3 + ", granite (Barre); " + emis},
		nil},
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
