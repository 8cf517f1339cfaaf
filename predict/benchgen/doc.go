// Package benchgen generates the forecasting accuracy benchmark kept in
// testdata/bench: simulated runs of specimens cooling in still air or under a fan,
// heating in an oven, or warming in a conditioning room, each with the true time its
// sensor crosses a target.
//
// The truth is coded apart from the engine, so the benchmark can catch an error in the
// engine's physics rather than only check it against itself. Each run is a
// one-dimensional finite-volume conduction solution (slab, cylinder or sphere, sensor
// at the centre or the surface), integrated by implicit Euler, with a surface
// condition built here:
//
//   - its own air properties (Sutherland's laws, the ideal gas, a linear cp), not the
//     engine's table;
//   - natural-convection correlations of other published forms than the engine's (the
//     laminar-range vertical-plate correlation with a turbulent branch, Morgan's
//     cylinder, Yuge's sphere) where the engine uses the all-range Churchill–Chu and
//     Churchill forms;
//   - its own material properties (typical figures, deliberately not the engine's
//     table's), an unknown per-specimen multiplier on the convective coefficient
//     (log-normal, about ±15 %), and a true emissivity perturbed by up to ±0.1 from the
//     nominal one written in the index (the one a lab would give);
//   - fans (a constant convective coefficient of 15–60 W/(m²·K)), ovens (air and walls
//     at a set point of 120–250 °C, circulation 10–30 W/(m²·K)), a drifting room, and
//     door events (a draught doubling convection for 1–3 minutes; an oven door dropping
//     the air 15–30 K and recovering);
//
// and the faults of a real logger: Gaussian noise, 0.1 °C quantisation, spikes,
// dropouts, non-numeric cells and a pre-roll before the specimen is placed.
//
// What it shares with the engine: the physics itself (a surface balance with convection
// plus grey-body radiation εσ(T⁴ − T∞⁴), conduction inside the specimen), the
// material names, and the shapes and sensor positions a specimen file can describe.
// It does not import predict/surface or predict/material. Everything follows from a
// fixed seed, so the files are reproducible.
package benchgen
