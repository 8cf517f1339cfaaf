package benchgen

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
)

// Case is one simulated run and its truth.
type Case struct {
	// File is the CSV's name within the benchmark directory.
	File string `json:"file"`
	// Material names a predict/material entry (the generator's own properties for it
	// are in materials); Emissivity is the nominal emissivity a lab would write for
	// the surface, TrueEmissivity the one the simulation used (perturbed).
	Material       string  `json:"material"`
	Emissivity     float64 `json:"emissivity"`
	TrueEmissivity float64 `json:"true_emissivity"`
	// Shape is slab, cylinder or sphere; SizeM the half-thickness or radius; LengthM
	// a slab's height (the vertical-plate length of its convection correlation).
	Shape   string  `json:"shape"`
	SizeM   float64 `json:"size_m"`
	LengthM float64 `json:"length_m"`
	// Sensor is center or surface.
	Sensor string `json:"sensor"`
	// Air is still (natural convection), fan (a constant FanH plus radiation) or oven
	// (the specimen heats in an oven whose air and walls are at SetC, with circulation
	// FanH). HMult is the specimen's unknown multiplier on the convective coefficient
	// (placement, edges, a neighbour's shadow).
	Air   string  `json:"air"`
	FanH  float64 `json:"fan_h,omitempty"`
	SetC  float64 `json:"set_c,omitempty"`
	HMult float64 `json:"h_mult"`
	// Initial is the specimen's uniform temperature when placed; Ambient the room's
	// (or the oven's) at placement; DriftKPerH the ambient's drift.
	Initial    float64 `json:"initial_c"`
	Ambient    float64 `json:"ambient_c"`
	DriftKPerH float64 `json:"drift_k_per_h"`
	// DoorS and DoorLenS, when DoorLenS > 0, are a door event: in a room a draught
	// doubles the convective coefficient for DoorLenS seconds; in an oven the air drops
	// by DoorDropK and recovers linearly over DoorLenS.
	DoorS     float64 `json:"door_s,omitempty"`
	DoorLenS  float64 `json:"door_len_s,omitempty"`
	DoorDropK float64 `json:"door_drop_k,omitempty"`
	// Measured says whether the file carries an ambient_c column.
	Measured bool `json:"measured_ambient"`
	// PlacedS is when the specimen was placed (t_s); before it the sensor reads the room.
	PlacedS float64 `json:"placed_s"`
	// StepS is the reading interval; Noise the Gaussian noise, °C.
	StepS float64 `json:"step_s"`
	Noise float64 `json:"noise_c"`
	// Faults lists the faults injected: spikes, dropouts, words.
	Faults []string `json:"faults"`
	// Target is the target temperature, °C; CrossingS the true time (t_s) the sensor
	// crosses it, from the noise-free solution.
	Target    float64 `json:"target_c"`
	CrossingS float64 `json:"crossing_s"`
	// Biot is h·Lc/k at placement (for the record).
	Biot float64 `json:"biot"`
}

// Hot reports whether the case is a hot specimen (placed at 150 °C or more).
func (c Case) Hot() bool { return c.Initial >= 150 }

// Seed is the benchmark's fixed seed.
const Seed = 20261202

// The benchmark's layout: still-air cooling, fan cooling, oven heating and cold
// specimens warming in a conditioning room.
const (
	nStill   = 32
	nFan     = 10
	nOven    = 6
	nWarming = 8
)

// Cases returns the benchmark's cases (without CrossingS and Biot, which Run
// computes), deterministically from Seed.
func Cases() []Case {
	rng := rand.New(rand.NewPCG(Seed, 1))
	mats := []string{"carbon steel", "stainless steel 304", "pure aluminium", "brass", "cast iron",
		"alumina", "common brick", "concrete", "soda-lime glass", "titanium alloy Ti-6Al-4V"}
	shapes := []string{"cylinder", "slab", "sphere"}
	var out []Case
	for i := range nStill + nFan + nOven + nWarming {
		m := mats[i%len(mats)]
		c := Case{
			File: fmt.Sprintf("run%02d.csv", i), Material: m, Shape: shapes[i%3],
			SizeM: 0.005 * math.Pow(8, rng.Float64()), Sensor: []string{"center", "surface"}[rng.IntN(2)],
			Ambient: 18 + 8*rng.Float64(), Noise: []float64{0.03, 0.1, 0.3}[rng.IntN(3)],
			Emissivity: materials[m].eps, Air: "still", HMult: math.Exp(0.15 * rng.NormFloat64()),
		}
		c.LengthM = 20 * c.SizeM
		if i%4 == 3 {
			c.Emissivity = math.Min(0.95, c.Emissivity+0.5) // an oxidised or painted surface
		}
		c.TrueEmissivity = math.Max(0.03, math.Min(0.97, c.Emissivity+0.1*(2*rng.Float64()-1)))
		switch {
		case i < nStill+nFan:
			// Initial temperatures 45–850 °C, log-spaced.
			c.Initial = 45 * math.Pow(850.0/45, rng.Float64())
			c.Target = 50
			if c.Initial < 120 {
				c.Target = c.Ambient + 0.3*(c.Initial-c.Ambient)
			}
			if i >= nStill {
				c.Air, c.FanH = "fan", 15+45*rng.Float64()
			}
		case i < nStill+nFan+nOven:
			// A specimen put into an oven at 120–250 °C, to within 5 K of the set point.
			c.Air, c.SetC, c.FanH = "oven", 120+130*rng.Float64(), 10+20*rng.Float64()
			c.Initial = c.Ambient
			c.Ambient = c.SetC
			c.Target = c.SetC - 5
		default:
			// A cold specimen warming in a conditioning room, to within 1 °C.
			c.Initial = -25 + 30*rng.Float64()
			c.Ambient = 23
			c.Target = c.Ambient - 1
		}
		c.Target = math.Round(c.Target*10) / 10
		if rng.IntN(3) == 0 && c.Air != "oven" && c.Initial > c.Ambient {
			c.DriftKPerH = 2 * (rng.Float64() - 0.5)
		}
		c.Measured = rng.IntN(2) == 0
		if rng.IntN(4) == 0 {
			c.PlacedS = 60 + 60*math.Floor(4*rng.Float64())
		}
		if rng.IntN(4) == 0 {
			c.DoorLenS = 60 + 120*rng.Float64()
			c.DoorS = rng.Float64() // a share of the time to the crossing, set in Run
			if c.Air == "oven" {
				c.DoorDropK = 15 + 15*rng.Float64()
			}
		}
		for _, f := range []string{"spikes", "dropouts", "words"} {
			if rng.IntN(3) == 0 {
				c.Faults = append(c.Faults, f)
			}
		}
		out = append(out, c)
	}
	return out
}

// geometry returns the case's convection shape and length.
func (c Case) geometry() (shape, float64) {
	switch c.Shape {
	case "cylinder":
		return cylinder, 2 * c.SizeM
	case "sphere":
		return sphere, 2 * c.SizeM
	}
	return plate, c.LengthM
}

// maxDrift caps the ambient's total drift, K.
const maxDrift = 1.5

// ambientAt is the room's (or the oven's air) temperature at t_s: the drift, and an
// oven door's drop and linear recovery.
func (c Case) ambientAt(t float64) float64 {
	d := c.DriftKPerH * math.Max(0, t-c.PlacedS) / 3600
	a := c.Ambient + math.Max(-maxDrift, math.Min(d, maxDrift))
	if c.DoorDropK > 0 && t >= c.DoorS && t < c.DoorS+c.DoorLenS {
		a -= c.DoorDropK * (1 - (t-c.DoorS)/c.DoorLenS)
	}
	return a
}

// wallsAt is the temperature the surface radiates to: the room (drifting with it) or
// the oven's walls, which stay at the set point through a door event.
func (c Case) wallsAt(t float64) float64 {
	if c.Air == "oven" {
		return c.SetC
	}
	return c.ambientAt(t)
}

// surface returns the surface coefficient at surface temperature ts at time t and the
// temperature it drives toward: convection to the air and grey-body radiation to the
// walls (each linearised at ts), combined as h = h_c + h_r toward
// (h_c·T_air + h_r·T_walls)/h.
func (c Case) surface(ts, t float64) (h, toward float64) {
	s, l := c.geometry()
	amb, tw := c.ambientAt(t), c.wallsAt(t)
	conv := naturalH(s, l, ts, amb)
	if c.FanH > 0 {
		conv = c.FanH
	}
	conv *= c.HMult
	if c.DoorDropK == 0 && c.DoorLenS > 0 && t >= c.DoorS && t < c.DoorS+c.DoorLenS {
		conv *= 2
	}
	rad := radiationH(c.TrueEmissivity, ts, tw)
	h = math.Max(conv+rad, 1e-6)
	return h, (conv*amb + rad*tw) / h
}

// cells is the number of finite volumes across the half-thickness or radius.
const cells = 16

// simulate integrates the conduction problem from placement and returns the sensor
// temperature every dt seconds until a quarter of the time to the target past the
// crossing, or until maxT seconds have passed. It also returns the Biot number at
// placement.
func (c Case) simulate(dt, maxT float64) (sensor []float64, biot float64) {
	p := materials[c.Material]
	m := map[string]float64{"slab": 0, "cylinder": 1, "sphere": 2}[c.Shape]
	dx := c.SizeM / cells
	vol := make([]float64, cells)  // cell volume per unit "angle", ∫ r^m dr
	area := make([]float64, cells) // face area at the outer face of cell i, r^m
	for i := range cells {
		r0, r1 := float64(i)*dx, float64(i+1)*dx
		vol[i] = (math.Pow(r1, m+1) - math.Pow(r0, m+1)) / (m + 1)
		area[i] = math.Pow(r1, m)
	}
	rc, k := p.rho*p.cp, p.k
	T := make([]float64, cells)
	for i := range T {
		T[i] = c.Initial
	}
	h0, _ := c.surface(c.Initial, c.PlacedS)
	biot = h0 * c.SizeM / (m + 1) / k
	a, b, d, rhs := make([]float64, cells), make([]float64, cells), make([]float64, cells), make([]float64, cells)
	side := math.Copysign(1, c.Initial-c.Target)
	stop := maxT
	for step := 0; float64(step)*dt <= stop; step++ {
		t := c.PlacedS + float64(step)*dt
		s := c.read(T, k, dx, t)
		sensor = append(sensor, s)
		if side*(s-c.Target) <= 0 && stop == maxT {
			stop = 1.25 * float64(step) * dt
		}
		// Implicit Euler; the surface coefficient is taken at the last step's surface
		// temperature (linearised), with a half-cell conduction resistance.
		h, toward := c.surface(c.surfaceT(T, k, dx, t), t+dt)
		ueff := 1 / (1/h + dx/(2*k))
		for i := range cells {
			cap := rc * vol[i] / dt
			a[i], b[i], d[i] = 0, cap, 0
			rhs[i] = cap * T[i]
			if i > 0 {
				w := k * area[i-1] / dx
				a[i] = -w
				b[i] += w
			}
			if i < cells-1 {
				w := k * area[i] / dx
				d[i] = -w
				b[i] += w
			} else {
				b[i] += ueff * area[i]
				rhs[i] += ueff * area[i] * toward
			}
		}
		thomas(a, b, d, rhs, T)
	}
	return sensor, biot
}

// surfaceT is the surface temperature from the outer cell through a half-cell.
func (c Case) surfaceT(T []float64, k, dx, t float64) float64 {
	tn := T[len(T)-1]
	h, toward := c.surface(tn, t)
	q := (tn - toward) / (1/h + dx/(2*k))
	return tn - q*dx/(2*k)
}

// read is the sensor's temperature: the centre cell, or the surface.
func (c Case) read(T []float64, k, dx, t float64) float64 {
	if c.Sensor == "surface" {
		return c.surfaceT(T, k, dx, t)
	}
	return T[0]
}

// thomas solves the tridiagonal system (a sub, b diagonal, d super) into x.
func thomas(a, b, d, rhs, x []float64) {
	n := len(b)
	cp, dp := make([]float64, n), make([]float64, n)
	cp[0], dp[0] = d[0]/b[0], rhs[0]/b[0]
	for i := 1; i < n; i++ {
		den := b[i] - a[i]*cp[i-1]
		cp[i] = d[i] / den
		dp[i] = (rhs[i] - a[i]*dp[i-1]) / den
	}
	x[n-1] = dp[n-1]
	for i := n - 2; i >= 0; i-- {
		x[i] = dp[i] - cp[i]*x[i+1]
	}
}

// simStep is the integration step, s.
const simStep = 0.5

// crossing returns the time (t_s) the sensor series first reaches the target.
func (c Case) crossing(sensor []float64) float64 {
	side := math.Copysign(1, c.Initial-c.Target)
	for i := 1; i < len(sensor); i++ {
		if side*(sensor[i]-c.Target) <= 0 {
			f := (sensor[i-1] - c.Target) / (sensor[i-1] - sensor[i])
			return c.PlacedS + (float64(i-1)+f)*simStep
		}
	}
	return math.NaN()
}

// Run simulates a case and returns it with CrossingS and Biot filled, and the CSV. A
// door event's start, drawn as a share of the time to the crossing, is placed from a
// first simulation without it. The readings come about 400 to the crossing, at least
// 2 s apart.
func Run(c Case) (Case, string) { return RunEvery(c, 400, 2) }

// RunEvery is Run with about readings readings to the crossing, at least minStepS
// apart: a denser record, as a logger reading every second makes.
func RunEvery(c Case, readings int, minStepS float64) (Case, string) {
	if c.DoorLenS > 0 {
		quiet := c
		quiet.DoorLenS, quiet.DoorDropK = 0, 0
		sensor, _ := quiet.simulate(simStep, 48*3600)
		cross := quiet.crossing(sensor)
		c.DoorS = math.Round(c.PlacedS + (0.1+0.6*c.DoorS)*(cross-c.PlacedS))
	}
	sensor, biot := c.simulate(simStep, 48*3600)
	c.Biot = biot
	c.CrossingS = c.crossing(sensor)
	end := c.PlacedS + float64(len(sensor)-1)*simStep
	c.StepS = math.Max(minStepS, math.Round((c.CrossingS-c.PlacedS)/float64(readings)))
	rng := rand.New(rand.NewPCG(Seed, uint64(len(c.File))*7919+uint64(c.File[3])*31+uint64(c.File[4])))
	var b strings.Builder
	b.WriteString("t_s,temp_c")
	if c.Measured {
		b.WriteString(",ambient_c")
	}
	b.WriteString("\n")
	room := c.Ambient
	if c.Air == "oven" {
		room = c.Initial // before placement the sensor reads the room, not the oven
	}
	for t := 0.0; t <= end; t += c.StepS {
		v := room
		if t >= c.PlacedS {
			j := (t - c.PlacedS) / simStep
			i := int(j)
			if i+1 < len(sensor) {
				v = sensor[i] + (j-float64(i))*(sensor[i+1]-sensor[i])
			} else {
				v = sensor[len(sensor)-1]
			}
		}
		b.WriteString(fmt.Sprintf("%g,%s", t, c.cellText(rng, v)))
		if c.Measured {
			b.WriteString(fmt.Sprintf(",%.1f", c.ambientAt(t)+0.05*rng.NormFloat64()))
		}
		b.WriteString("\n")
	}
	return c, b.String()
}

// cellText renders one reading with noise, quantisation and the case's faults.
func (c Case) cellText(rng *rand.Rand, v float64) string {
	v += c.Noise * rng.NormFloat64()
	has := func(f string) bool {
		for _, x := range c.Faults {
			if x == f {
				return true
			}
		}
		return false
	}
	u := rng.Float64()
	switch {
	case has("dropouts") && u < 0.02:
		return ""
	case has("words") && u > 0.995:
		return "OPEN"
	case has("spikes") && u > 0.02 && u < 0.027:
		v += 20 + 80*rng.Float64()
	}
	return fmt.Sprintf("%.1f", math.Round(v*10)/10)
}

// Index is the benchmark's index file: the cases with their truth.
type Index struct {
	Note  string `json:"note"`
	Seed  int    `json:"seed"`
	Cases []Case `json:"cases"`
}

// Write generates every case into dir: one CSV per case and index.json.
func Write(dir string) error {
	idx := Index{Note: "generated by predict/benchgen (go test ./predict -run TestBenchFiles -update-bench); truth from a 1-D finite-volume conduction solution with the generator's own air properties, correlations and materials (see its package doc)", Seed: Seed}
	for _, c := range Cases() {
		c, csv := Run(c)
		if err := os.WriteFile(filepath.Join(dir, c.File), []byte(csv), 0o644); err != nil {
			return fmt.Errorf("benchgen: %w", err)
		}
		idx.Cases = append(idx.Cases, c)
	}
	b, err := json.MarshalIndent(idx, "", "  ")
	if err != nil {
		return fmt.Errorf("benchgen: index: %w", err)
	}
	return os.WriteFile(filepath.Join(dir, "index.json"), append(b, '\n'), 0o644)
}
