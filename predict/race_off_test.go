//go:build !race

package predict

// raceEnabled is true under -race, where the long property sweeps run fewer cases.
const raceEnabled = false
