package material

import (
	"fmt"
	"strings"
	"text/tabwriter"
)

// List lists the built-in materials, one per line with their properties under the
// specimen keys that set them, for messages and `settle config materials`. Every
// line starts with indent.
func List(indent string) string {
	var b strings.Builder
	w := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	fmt.Fprintf(w, "%sname\tdensity_kg_m3\tspecific_heat_j_kgk\tconductivity_w_mk\temissivity (oxidised; bright)\n", indent)
	for _, name := range Names() {
		m, _ := Lookup(name) // a name from Names is always there
		emis := fmt.Sprintf("%.2g (%s)", m.Emissivity, rangeText(m.Oxidised))
		if m.Metal {
			emis += "; bright " + rangeText(m.Bright)
		}
		fmt.Fprintf(w, "%s%s\t%g\t%g\t%g\t%s\n", indent, name, m.Density, m.SpecificHeat, m.Conductivity, emis)
	}
	w.Flush()
	return strings.TrimSuffix(b.String(), "\n")
}

func rangeText(r Range) string { return fmt.Sprintf("%g–%g", r.Lo, r.Hi) }
