package surface

// StefanBoltzmann is σ, W/(m²·K⁴) (CODATA 2018; exact given the 2019 SI constants,
// quoted to 10 significant digits).
const StefanBoltzmann = 5.670374419e-8

// Radiation returns the linearised radiative coefficient of a grey surface exchanging
// with large surroundings at the ambient temperature:
// h_rad = ε·σ·(Ts² + T∞²)(Ts + T∞) in W/(m²·K), temperatures converted to kelvin, so
// that q = h_rad·(Ts − T∞) is exactly ε·σ·(Ts⁴ − T∞⁴). At Ts = T∞ = Tm it is 4·ε·σ·Tm³,
// the hr of EN ISO 6946. emissivity should lie in [0, 1]; it is not checked.
func Radiation(emissivity, surfaceC, ambientC float64) float64 {
	ts := surfaceC + ZeroCelsius
	ta := ambientC + ZeroCelsius
	return emissivity * StefanBoltzmann * (ts*ts + ta*ta) * (ts + ta)
}

// RadiationShift returns Radiation(emissivity, surfaceC, ambientC) and its derivative
// with respect to a common shift x of both temperatures (see ConvectionShift),
// ε·σ·[2(Ts + T∞)² + 2(Ts² + T∞²)] in W/(m²·K²), temperatures in kelvin.
func RadiationShift(emissivity, surfaceC, ambientC float64) (h, dh float64) {
	ts := surfaceC + ZeroCelsius
	ta := ambientC + ZeroCelsius
	sum := ts + ta
	return emissivity * StefanBoltzmann * (ts*ts + ta*ta) * sum,
		emissivity * StefanBoltzmann * 2 * (sum*sum + ts*ts + ta*ta)
}

// CoefficientShift returns Coefficient(g, lengthM, emissivity, surfaceC, ambientC)
// and its derivative with respect to a common shift of both temperatures
// (ConvectionShift plus RadiationShift).
func CoefficientShift(g Geometry, lengthM, emissivity, surfaceC, ambientC float64) (h, dh float64) {
	c, dc := ConvectionShift(g, lengthM, surfaceC, ambientC)
	r, dr := RadiationShift(emissivity, surfaceC, ambientC)
	return c + r, dc + dr
}

// Coefficient returns the total surface coefficient Convection + Radiation in
// W/(m²·K) of a body of the given geometry, characteristic length (metres) and
// emissivity at surfaceC in still air and surroundings at ambientC (both °C).
// It does not allocate; use Check once per fit for the validity notes.
func Coefficient(g Geometry, lengthM, emissivity, surfaceC, ambientC float64) float64 {
	return Convection(g, lengthM, surfaceC, ambientC) + Radiation(emissivity, surfaceC, ambientC)
}
