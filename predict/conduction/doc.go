// Package conduction holds the exact series solutions for transient conduction
// inside a specimen with a constant surface coefficient h: the plane wall
// (half-thickness L), the infinite cylinder and the sphere (radius r0), and the
// product solutions built from them (a cylinder of finite length, a rectangular
// block).
//
// Everything is dimensionless. With θ = T − T∞ and θi the uniform initial excess,
//
//	θ/θi = Σ Cn·exp(−ζn²·Fo)·X(ζn·x*),  Bi = h·L/k,  Fo = α·t/L²,
//
// where L is the half-thickness (wall) or the radius r0 (cylinder, sphere), x* is
// x/L or r/r0 in [0, 1], and X is cos (wall), J0 (cylinder) or sin(z)/z (sphere).
// Note that this Bi and Fo use L or r0, not the lumped length V/A.
//
// The eigenvalues ζn are bracketed one per known interval and solved with Brent's
// method on forms of the eigenvalue equations that have no poles, so no root is
// missed or counted twice at any Bi in (0, ∞]. A Series precomputes ζn and Cn once;
// a Curve fixes a position (or the volume mean) so that evaluating many times is a
// short sum of exponentials. The number of terms summed at each Fo is chosen from Fo
// itself (terms whose exp(−(ζn²−ζ1²)·Fo) is below about 2e-16 are dropped); the cap
// set when the Series is built gives the smallest Fo handled at full accuracy,
// reported by MinFo.
//
// The one-term form (OneTerm) is the cheap path for Fo > 0.2 (common practice; the
// one-term error at Fo = 0.2 is below about 1.5 %, see the reference values).
//
// # Finite volume
//
// FV solves the slab, cylinder or sphere numerically (vertex-centred grid,
// Crank–Nicolson after four backward-Euler steps, a hand-written tridiagonal solve)
// with a surface coefficient that may depend on the surface temperature; NaturalH
// gives the natural-convection-plus-radiation h(Ts) of predict/surface times a
// scale factor. It is the model for hot and thick specimens, where h changes
// several-fold during the cooling and Bi is not small.
//
// # Fitting
//
// A Specimen holds the shape (all five: Slab, Cylinder, Sphere, ShortCylinder,
// Cuboid), its half-dimensions, ρ, c, k, ε and the sensor Position. FitSeries fits
// the constant-h series (or product) model — Bi, the initial temperature and,
// when not measured, the ambient — by variable projection on ln Bi. FitFV fits the
// FV model's h scale, initial temperature and ambient by Levenberg–Marquardt,
// starting from FitSeries. Both return a Fit: the temperature at any position and
// time (so a surface thermocouple yields a core forecast) and Hottest, the point a
// handling target must be judged on.
package conduction
