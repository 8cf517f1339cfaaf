// Package clean checks readings before anything reaches a fit: out-of-range values,
// isolated spikes and stuck readings get a fault status (daq.StatusRange,
// daq.StatusSpike, daq.StatusStuck) and stay in the record; open circuits and
// unreadable values arrive already marked by the drivers and pass through.
//
// Spikes are found with a Hampel identifier: a reading is a spike when it lies further
// from the median of its window than SpikeSigmas robust standard deviations (1.4826 ×
// the median absolute deviation) and more than SpikeMinCelsius. The window is centred,
// so that the first readings of a real step (a specimen placed on the rack) are judged
// with the new level on one side and are not flagged; to stay causal, each channel's
// readings therefore leave the cleaner (SpikeWindow−1)/2 readings late (three readings
// with the default window of 7). Readings keep their order per channel; faults of a
// channel wait behind its delayed readings. Flush emits what is still held, at
// shutdown.
//
// A reading is stuck when it is the StuckCount-th identical value in a row, which is
// only meaningful where noise is expected in the last digit; the check is off by
// default.
package clean
