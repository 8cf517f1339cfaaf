// Package benchgen generates the forecasting accuracy benchmark kept in
// testdata/bench: simulated runs of specimens cooling in still air (or warming in a
// conditioning room), each with the true time its sensor crosses a target.
//
// The truth is not the forecaster's own model: each run is a one-dimensional
// finite-volume conduction solution (slab, cylinder or sphere, sensor at the centre
// or the surface) with the nonlinear surface condition of predict/surface (natural
// convection plus grey-body radiation at the specimen's own emissivity and
// geometry), integrated by implicit Euler. Readings then get the faults of a real
// logger: Gaussian noise, 0.1 °C quantisation, spikes, dropouts, non-numeric cells, a
// drifting ambient, and a pre-roll at room temperature before the specimen is placed.
// Everything follows from a fixed seed, so the files are reproducible.
package benchgen
