// Package predict owns the physics: heat-transfer models, the fitter, segmentation,
// forecasts with intervals, and per-channel trackers that turn a channel's readings
// into a Forecast.
//
// It knows nothing of serial ports or HTTP. Times inside a fit are seconds relative to
// the start of the segment; times in a Forecast are absolute (time.Time) on the
// readings' own clock, so replays and time-lapse simulations keep physical time.
package predict
