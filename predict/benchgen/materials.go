package benchgen

// props are the generator's own material properties: density (kg/m³), specific heat
// (J/(kg·K)), conductivity (W/(m·K)) and the nominal emissivity a lab would write for
// the surface. They are typical handbook figures from memory, chosen independently of
// predict/material (for carbon steel, AISI 1010 rather than plain carbon steel; grey
// cast iron at the low end of its conductivity range; and so on), so that the engine's
// table and the truth differ as a lab's guess and its specimen do.
type props struct{ rho, cp, k, eps float64 }

// materials is the generator's table.
var materials = map[string]props{
	"carbon steel":             {7832, 434, 63.9, 0.80}, // AISI 1010
	"stainless steel 304":      {8000, 500, 16.2, 0.40},
	"pure aluminium":           {2700, 900, 230, 0.08},
	"brass":                    {8500, 380, 120, 0.20},
	"cast iron":                {7150, 490, 46, 0.80},
	"alumina":                  {3900, 780, 30, 0.80},
	"common brick":             {1900, 840, 0.80, 0.90},
	"concrete":                 {2400, 900, 1.6, 0.90},
	"soda-lime glass":          {2500, 800, 1.05, 0.92},
	"titanium alloy Ti-6Al-4V": {4430, 560, 7.1, 0.30},
}
