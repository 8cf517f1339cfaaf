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

// Coefficient returns the total surface coefficient Convection + Radiation in
// W/(m²·K) of a body of the given geometry, characteristic length (metres) and
// emissivity at surfaceC in still air and surroundings at ambientC (both °C).
// It does not allocate; use Check once per fit for the validity notes.
func Coefficient(g Geometry, lengthM, emissivity, surfaceC, ambientC float64) float64 {
	return Convection(g, lengthM, surfaceC, ambientC) + Radiation(emissivity, surfaceC, ambientC)
}
