package sim

import (
	"math"
	"math/rand/v2"
	"time"
)

// MaxStep is the largest RK4 step in seconds. The fastest demo specimen has a time
// constant of a few minutes, so 0.1 s keeps the integration error far below the 0.1 °C
// resolution.
const MaxStep = 0.1

// Sample is one line of the logger: its clock and one value per column (NaN = missing).
type Sample struct {
	// Clock is the logger's clock in seconds.
	Clock float64
	// Values holds one temperature in °C per column; NaN is a missing reading.
	Values []float64
}

// Lines is a stream of logger samples: the simulator or a replayed recording.
type Lines interface {
	// Columns names the value columns in order (for the '#' header line).
	Columns() []string
	// Next returns the next sample, or io.EOF when the stream is done.
	Next() (Sample, error)
}

// Sim integrates a Scenario and samples it like a logger every interval. It
// implements Lines (an endless stream; bound it with Options.Duration).
type Sim struct {
	sc       Scenario
	interval float64
	rng      *rand.Rand
	t        float64   // physical seconds since the start
	temps    []float64 // true specimen temperatures at t
}

// NewSim starts the scenario at t = 0 with the specimens at their StartC. Readings are
// taken every interval (DefaultInterval if ≤ 0) with noise from a generator seeded by
// seed, so equal seeds give equal runs.
func NewSim(sc Scenario, interval time.Duration, seed uint64) *Sim {
	if interval <= 0 {
		interval = DefaultInterval
	}
	s := &Sim{sc: sc, interval: interval.Seconds(), rng: rand.New(rand.NewPCG(seed, 0x5e771e))}
	for _, sp := range sc.Specimens {
		s.temps = append(s.temps, sp.StartC)
	}
	return s
}

// Columns returns the scenario's channel names: specimens, then ambient.
func (s *Sim) Columns() []string { return s.sc.Columns() }

// Time returns the physical time in seconds since the start.
func (s *Sim) Time() float64 { return s.t }

// True returns the noiseless specimen temperatures at the current time.
func (s *Sim) True() []float64 { return append([]float64(nil), s.temps...) }

// Next samples the current state and then advances by one interval.
func (s *Sim) Next() (Sample, error) {
	vals := make([]float64, 0, len(s.temps)+1)
	for _, T := range s.temps {
		vals = append(vals, s.read(T, s.sc.NoiseC))
	}
	vals = append(vals, s.read(s.sc.Ambient.At(s.t), s.sc.NoiseC/2))
	smp := Sample{Clock: s.t, Values: vals}
	s.Advance(s.interval)
	return smp, nil
}

// read adds Gaussian noise of standard deviation sd and rounds to the resolution.
func (s *Sim) read(T, sd float64) float64 {
	v := T + sd*s.rng.NormFloat64()
	if r := s.sc.ResolutionC; r > 0 {
		v = math.Round(v/r) * r
	}
	return v
}

// Advance integrates every specimen by dt seconds in RK4 steps of at most MaxStep.
func (s *Sim) Advance(dt float64) {
	n := int(math.Ceil(dt / MaxStep))
	if n < 1 {
		return
	}
	h, start := dt/float64(n), s.t
	for k := range n {
		t := start + float64(k)*h
		for i, sp := range s.sc.Specimens {
			s.temps[i] = rk4(func(t, T float64) float64 { return s.rate(sp, t, T) }, t, s.temps[i], h)
		}
	}
	s.t = start + dt // exact for whole-second intervals, so the clock does not drift
}

// rate is dT/dt = −h(T, T∞)·A·(T − T∞)/(ρ·c·V) for one specimen.
func (s *Sim) rate(sp Specimen, t, T float64) float64 {
	amb := s.sc.Ambient.At(t)
	m := sp.Material
	return -sp.H(T, amb) * sp.AreaM2 * (T - amb) / (m.Density * m.SpecificHeat * sp.VolumeM3)
}

// rk4 takes one classical Runge–Kutta step of size h for dy/dt = f(t, y).
func rk4(f func(t, y float64) float64, t, y, h float64) float64 {
	k1 := f(t, y)
	k2 := f(t+h/2, y+h/2*k1)
	k3 := f(t+h/2, y+h/2*k2)
	k4 := f(t+h, y+h*k3)
	return y + h/6*(k1+2*k2+2*k3+k4)
}
