// Package sim simulates a thermocouple logger on a cooling rack, for demos, tests and
// trying settle without hardware.
//
// The built-in scenario (DemoScenario) is our own invention: rack 2 after the afternoon
// furnace and oven batches, with a carbon-steel cylinder from the hardening furnace, a
// brass sphere from the annealing furnace, an aluminium-alloy plate from the ageing oven,
// an alumina tile from the curing oven and an ambient sensor. Each specimen cools as a
// lumped body whose surface coefficient depends on its temperature, h(T) = natural
// convection (Churchill–Chu / Churchill, air at the film temperature) + grey-body
// radiation, from package predict/surface; the ODE is integrated with classical RK4.
// Readings carry Gaussian noise and 0.1 °C resolution from a seeded generator.
//
// The logger speaks a simple text format of our own:
//
//	# t_s,<channel 1>,<channel 2>,...,<ambient channel>
//	0.0,846.1,449.8,199.9,79.9,21.5
//	2.0,843.9,449.3,199.9,79.9,21.6
//
// The first field is the logger's own clock in seconds, so a time-lapse run keeps
// physical time; Run paces lines by that clock divided by Options.Speed. Replay streams
// a recorded curve (CSV t_s,temp_c,ambient_c) the same way.
//
// The package sits beside settle's command, its only user, rather than in daq: it
// models specimens with predict's materials and surface physics, and acquisition
// imports nothing of predict.
package sim
