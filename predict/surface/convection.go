package surface

import "math"

// Physical constants.
const (
	// StandardGravity is g_n, m/s² (CGPM 1901, exact by definition).
	StandardGravity = 9.80665
	// ZeroCelsius is 0 °C in kelvin.
	ZeroCelsius = 273.15
)

// Rayleigh returns the Rayleigh number Ra = g·β·|Ts − T∞|·Lc³/(ν·α) and the Prandtl
// number of air at the film temperature Tf = (Ts + T∞)/2, with β = 1/Tf (ideal gas).
// lengthM is the geometry's characteristic length (plate height, or diameter); the
// formula is the same for every geometry. Temperatures are in °C. Ra is 0 when
// Ts = T∞ and NaN when lengthM is not positive.
func Rayleigh(g Geometry, lengthM, surfaceC, ambientC float64) (Ra, Pr float64) {
	_ = g // the formula does not depend on shape; g names how lengthM is read.
	filmK := filmKelvin(surfaceC, ambientC)
	p := Air(filmK)
	return rayleigh(p, filmK, lengthM, math.Abs(surfaceC-ambientC)), p.Pr
}

// rayleigh computes Ra from given air properties at filmK kelvin, a characteristic
// length in metres and a temperature difference deltaK ≥ 0 in kelvin.
func rayleigh(p AirProps, filmK, lengthM, deltaK float64) float64 {
	if !(lengthM > 0) {
		return math.NaN()
	}
	return StandardGravity * deltaK * lengthM * lengthM * lengthM / (filmK * p.Nu * p.Alpha)
}

// filmKelvin is the film temperature in kelvin from two temperatures in °C.
func filmKelvin(surfaceC, ambientC float64) float64 {
	return (surfaceC+ambientC)/2 + ZeroCelsius
}

// Nusselt returns the average Nusselt number Nu = h·Lc/k of an isothermal body in free
// convection, from the Rayleigh number Ra ≥ 0 and Prandtl number Pr > 0:
//
//   - VerticalPlate: Churchill–Chu (1975), Incropera Eq. 9.26, all Ra:
//     Nu = {0.825 + 0.387·Ra^(1/6) / [1 + (0.492/Pr)^(9/16)]^(8/27)}²;
//   - HorizontalCylinder: Churchill–Chu (1975), Incropera Eq. 9.34, Ra ≤ 1e12:
//     Nu = {0.60 + 0.387·Ra^(1/6) / [1 + (0.559/Pr)^(9/16)]^(8/27)}²;
//   - Sphere: Churchill (1983), Incropera Eq. 9.35, Ra ≤ 1e11, Pr ≥ 0.7:
//     Nu = 2 + 0.589·Ra^(1/4) / [1 + (0.469/Pr)^(9/16)]^(4/9).
//
// It does not check the ranges (Validity does). It returns NaN for an unknown geometry,
// a negative Ra or a non-positive Pr.
func Nusselt(g Geometry, Ra, Pr float64) float64 {
	if !(Pr > 0) {
		return math.NaN()
	}
	return nusseltFrom(g, Ra, prFactor(g, Pr))
}

// prFactor is the Prandtl-number denominator of the geometry's correlation:
// [1 + (0.492/Pr)^(9/16)]^(8/27) (plate), [1 + (0.559/Pr)^(9/16)]^(8/27) (cylinder),
// [1 + (0.469/Pr)^(9/16)]^(4/9) (sphere); NaN for an unknown geometry.
func prFactor(g Geometry, Pr float64) float64 {
	switch g {
	case VerticalPlate:
		return math.Pow(1+math.Pow(0.492/Pr, 9.0/16), 8.0/27)
	case HorizontalCylinder:
		return math.Pow(1+math.Pow(0.559/Pr, 9.0/16), 8.0/27)
	case Sphere:
		return math.Pow(1+math.Pow(0.469/Pr, 9.0/16), 4.0/9)
	}
	return math.NaN()
}

// nusseltFrom evaluates the geometry's correlation from Ra and its Prandtl factor.
func nusseltFrom(g Geometry, Ra, prFac float64) float64 {
	if !(Ra >= 0) {
		return math.NaN()
	}
	switch g {
	case VerticalPlate:
		root := 0.825 + 0.387*math.Cbrt(math.Sqrt(Ra))/prFac
		return root * root
	case HorizontalCylinder:
		root := 0.60 + 0.387*math.Cbrt(math.Sqrt(Ra))/prFac
		return root * root
	case Sphere:
		return 2 + 0.589*math.Sqrt(math.Sqrt(Ra))/prFac
	}
	return math.NaN()
}

// Convection returns the natural-convection coefficient h = Nu·k/Lc in W/(m²·K) of a
// body of the given geometry and characteristic length (metres) at surfaceC in still
// air at ambientC (both °C). Properties are taken at the film temperature and β = 1/Tf.
// Heating and cooling are symmetric (|ΔT| is used). It returns 0 when ΔT = 0: there is
// then no flow and no flux (the limit as ΔT → 0 is not 0 but Nu(0)·k/Lc, with
// Nu(0) = 0.681, 0.36 and 2 for plate, cylinder and sphere; q = h·ΔT vanishes either
// way). It returns NaN for a non-positive length or an unknown geometry.
//
// With the ambient near room temperature, h_conv grows with |ΔT| up to about 600 K;
// beyond that, for Ra above about 1e6, the film-temperature properties make it level
// off and fall slowly (about 1 % per 100 K), while Radiation keeps growing.
func Convection(g Geometry, lengthM, surfaceC, ambientC float64) float64 {
	h, _ := convection(g, lengthM, surfaceC, ambientC, false)
	return h
}

// ConvectionShift returns Convection(g, lengthM, surfaceC, ambientC) and its derivative
// with respect to a common shift x of both temperatures, d/dx Convection(surfaceC + x,
// ambientC + x) at x = 0, in W/(m²·K²): the change of h when the ambient moves and the
// surface keeps its excess over it, as the h(T) model needs when it fits the ambient.
// Only the film temperature moves; the air properties' slopes are those of the table
// interval it lies in (0 outside the table), so at a table row the derivative is the
// lower interval's. The derivative is 0 where h is 0 (ΔT = 0) and NaN where h is.
func ConvectionShift(g Geometry, lengthM, surfaceC, ambientC float64) (h, dh float64) {
	return convection(g, lengthM, surfaceC, ambientC, true)
}

// convection is Convection and, when shift is set, ConvectionShift's derivative (else
// 0). The value is computed by the same operations either way.
func convection(g Geometry, lengthM, surfaceC, ambientC float64, shift bool) (h, dh float64) {
	deltaK := math.Abs(surfaceC - ambientC)
	if deltaK == 0 && g.valid() && lengthM > 0 {
		return 0, 0
	}
	if !g.valid() {
		return math.NaN(), math.NaN()
	}
	filmK := filmKelvin(surfaceC, ambientC)
	a := airConvAt(filmK, g, shift)
	if !(lengthM > 0) {
		return math.NaN(), math.NaN()
	}
	den := filmK * a.nu * a.alpha
	Ra := StandardGravity * deltaK * lengthM * lengthM * lengthM / den
	if !shift {
		return nusseltFrom(g, Ra, a.fac) * a.k / lengthM, 0
	}
	// Ra ∝ 1/(Tf·ν·α) at a fixed ΔT, so d ln Ra = −(1/Tf + ν′/ν + α′/α), over one
	// denominator; Nu = (c + b·Ra^(1/6)/F)² or 2 + b·Ra^(1/4)/F.
	dlnRa := -(a.nu*a.alpha + filmK*(a.dnu*a.alpha+a.nu*a.dalpha)) / den
	var nu, dnu float64
	switch g {
	case VerticalPlate, HorizontalCylinder:
		c := 0.825
		if g == HorizontalCylinder {
			c = 0.60
		}
		r := 0.387 * math.Cbrt(math.Sqrt(Ra)) / a.fac
		root := c + r
		nu, dnu = root*root, 2*root*r*(dlnRa/6-a.dfac/a.fac)
	case Sphere:
		r := 0.589 * math.Sqrt(math.Sqrt(Ra)) / a.fac
		nu, dnu = 2+r, r*(dlnRa/4-a.dfac/a.fac)
	}
	return nu * a.k / lengthM, (dnu*a.k + nu*a.dk) / lengthM
}
