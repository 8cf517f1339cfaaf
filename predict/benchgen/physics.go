package benchgen

import "math"

// The generator's own physics, coded apart from predict/surface: air properties from
// Sutherland's laws and the ideal gas, and natural-convection correlations of other
// published forms than the engine's. What it shares with the engine is only the
// physics itself: a lumped surface balance q = h·(Ts − T∞) with h = h_conv + h_rad, and
// grey-body radiation εσ(Ts⁴ − T∞⁴) (a law, not a choice).

// zeroC is 0 °C in kelvin.
const zeroC = 273.15

// sigmaSB is the Stefan–Boltzmann constant, W/(m²·K⁴) (CODATA 2018).
const sigmaSB = 5.670374419e-8

// air holds the properties of dry air at 1 atm that natural convection needs.
type air struct{ k, nu, alpha, pr float64 }

// airAt returns the properties of dry air at 1 atm at tK kelvin: viscosity and
// conductivity by Sutherland's laws (μ0 = 1.716e-5 Pa·s, S = 110.4 K; k0 = 0.0241
// W/(m·K), S = 194 K; reference 273.15 K: White, Viscous Fluid Flow, Table 1-2 and 1-3,
// from memory), density from the ideal gas (R = 287.05 J/(kg·K)), cp from a linear fit
// 1002 + 0.08·(T − 273) J/(kg·K) over 250–900 K (a rough fit typed here, within about
// 1 % of the tabulated values recalled).
func airAt(tK float64) air {
	tK = math.Max(200, math.Min(tK, 1500))
	r := tK / zeroC
	mu := 1.716e-5 * r * math.Sqrt(r) * (zeroC + 110.4) / (tK + 110.4)
	k := 0.0241 * r * math.Sqrt(r) * (zeroC + 194) / (tK + 194)
	rho := 101325 / (287.05 * tK)
	cp := 1002 + 0.08*(tK-zeroC)
	nu := mu / rho
	alpha := k / (rho * cp)
	return air{k: k, nu: nu, alpha: alpha, pr: nu / alpha}
}

// shape is a convection geometry of the generator.
type shape int

const (
	plate    shape = iota // vertical plate of height l
	cylinder              // horizontal cylinder of diameter l
	sphere                // sphere of diameter l
)

// nusselt returns the natural-convection Nusselt number for Rayleigh number ra and
// Prandtl number pr, by correlations other than the engine's where one exists:
//
//   - plate: the laminar-range Churchill–Chu form, Nu = 0.68 + 0.670·Ra^¼ /
//     [1 + (0.492/Pr)^(9/16)]^(4/9) for Ra ≤ 1e9, and McAdams' turbulent
//     Nu = 0.10·Ra^⅓ above (Incropera Eq. 9.27 and McAdams, Heat Transmission, 1954;
//     from memory);
//   - cylinder: Morgan's (1975) piecewise Nu = C·Ra^n (C, n = 0.850, 0.188 for
//     1e2–1e4; 0.480, 0.250 for 1e4–1e7; 0.125, 0.333 for 1e7–1e12; 1.02, 0.148 below:
//     Incropera Table 9.1, from memory);
//   - sphere: Yuge's (1960) Nu = 2 + 0.43·Ra^¼ (as quoted in heat-transfer texts for
//     Pr ≈ 1, from memory).
func nusselt(s shape, ra, pr float64) float64 {
	ra = math.Max(ra, 0)
	switch s {
	case plate:
		if ra > 1e9 {
			return math.Max(0.10*math.Cbrt(ra), nusselt(plate, 1e9, pr))
		}
		return 0.68 + 0.670*math.Pow(ra, 0.25)/math.Pow(1+math.Pow(0.492/pr, 9.0/16), 4.0/9)
	case cylinder:
		c, n := 1.02, 0.148
		switch {
		case ra >= 1e7:
			c, n = 0.125, 1.0/3
		case ra >= 1e4:
			c, n = 0.480, 0.250
		case ra >= 1e2:
			c, n = 0.850, 0.188
		}
		return c * math.Pow(ra, n)
	}
	return 2 + 0.43*math.Pow(ra, 0.25)
}

// naturalH returns the natural-convection coefficient, W/(m²·K), of shape s with
// length l (m) at surface ts in air at ta (°C); properties at the film temperature,
// β = 1/T_film.
func naturalH(s shape, l, ts, ta float64) float64 {
	d := math.Abs(ts - ta)
	if d == 0 {
		return 0
	}
	film := (ts+ta)/2 + zeroC
	p := airAt(film)
	ra := 9.80665 * d * l * l * l / (film * p.nu * p.alpha)
	return nusselt(s, ra, p.pr) * p.k / l
}

// radiationH returns the linearised radiative coefficient εσ(Ts² + Tw²)(Ts + Tw),
// W/(m²·K), of a grey surface at ts facing walls at tw (°C).
func radiationH(eps, ts, tw float64) float64 {
	a, b := ts+zeroC, tw+zeroC
	return eps * sigmaSB * (a*a + b*b) * (a + b)
}
