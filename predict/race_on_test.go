//go:build race

package predict

// raceEnabled is true under -race, where the long single-goroutine benchmarks skip.
const raceEnabled = true
