// Package surface computes the temperature-dependent surface coefficient of a hot (or
// cold) specimen in still air at 1 atm: natural convection from the Churchill–Chu and
// Churchill correlations plus grey-body radiation to large surroundings.
//
// The coefficient is h(T) = h_conv(ΔT) + h_rad(T), with
//
//   - h_conv = Nu·k/Lc, Nu from Nusselt with Ra from Rayleigh, air properties (Air)
//     taken at the film temperature Tf = (Ts + T∞)/2 and β = 1/Tf (ideal gas);
//   - h_rad = ε·σ·(Ts² + T∞²)(Ts + T∞), temperatures in kelvin (Radiation).
//
// Characteristic length Lc per geometry (the lengthM argument everywhere):
//
//   - VerticalPlate: the plate height L (Churchill–Chu 1975, Incropera Eq. 9.26);
//   - HorizontalCylinder: the diameter D (Churchill–Chu 1975, Incropera Eq. 9.34);
//   - Sphere: the diameter D (Churchill 1983, Incropera Eq. 9.35).
//
// Validity reports when Ra or Pr lies outside a correlation's stated range; Check does the
// same from temperatures and also flags film temperatures outside the air table.
//
// All functions are pure, allocation-free and safe for concurrent use: an ODE integrator
// may call Coefficient at every step.
package surface
