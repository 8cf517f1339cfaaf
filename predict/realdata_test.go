package predict

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// realDir holds the measured curves from outside the project (sources and licences in
// its README.md; see also testdata/predict/REALDATA.md).
const realDir = "../../shared/realdata"

// realSegment is one measured piece of a curve: a cool-down or warm-up from its
// start (placement, power step or end of a current pulse), times in seconds from it.
type realSegment struct {
	family, name string
	curve        CurveFile
}

// openReal opens a file of realDir, skipping the test when the folder is absent (a
// plain clone has no shared folder).
func openReal(t *testing.T, name string) *os.File {
	t.Helper()
	path := filepath.Join(realDir, name)
	f, err := os.Open(path)
	if os.IsNotExist(err) {
		t.Skipf("%s absent (a plain clone has no shared folder)", path)
	}
	if err != nil {
		t.Fatal(err)
	}
	return f
}

func fahrenheitToC(f float64) float64 { return (f - 32) * 5 / 9 }

// realSegments reads every measured segment: the mug (mosaicData CoolingWater), the
// four fastR2 mugs with and without an oil film, Rumford's cannon (Bates & Watts 1988
// via R's nls examples), the rest cool-downs of the 18650 cell in its chamber
// (ARTS-Laboratory, CC BY-SA 4.0) and the heater board's power steps (APMonitor,
// Apache-2.0).
func realSegments(t *testing.T) []realSegment {
	t.Helper()
	var out []realSegment
	minutes, celsius := readMug(t)
	out = append(out, realSegment{"mug", "mosaicData CoolingWater", minuteCurve(minutes, celsius)})
	out = append(out, oilFilmSegments(t)...)
	out = append(out, rumfordSegment(t))
	out = append(out, cellSegments(t)...)
	out = append(out, heaterSegments(t)...)
	return out
}

// minuteCurve makes a curve from minutes and °C.
func minuteCurve(minutes, celsius []float64) CurveFile {
	c := CurveFile{Celsius: celsius}
	for _, m := range minutes {
		c.Times = append(c.Times, 60*m)
	}
	return c
}

func parseReal(t *testing.T, file string, line int, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil {
		t.Fatalf("%s line %d: %v", file, line, err)
	}
	return v
}

// oilFilmSegments reads mug-water-oil-film.csv: one segment per data set; sets 1–2
// are in minutes, 3–4 in seconds (the file's README section).
//
// The mugs, measured (issue 12; a throwaway diagnostic printed the engine's law,
// settling temperature and answer at every cutoff; "miss" is the central estimate's
// error over the remaining time, "late"/"early" its side):
//
//   - The two oil-film mugs are not one body at first. CoolingWater2 (Wagon; 56
//     readings 4 minutes apart, 91.2 → 45.0 °C over 220 minutes) drops 2.2 K in its
//     first step, 1.7 K in the next and then 1.4 K a step: the mug's wall taking up
//     heat from the water. From 5 minutes on, convection and radiation alone fit the
//     whole curve with 0.04 K rms, settling at 22 °C. CoolingWater4 (Portmann & Wagon;
//     60 readings a minute apart, 86.7 → 42.9 °C over 59 minutes) bends the other way:
//     its speed rises over the first 4 minutes (0.77 → 1.1 K/min) and then holds, as
//     a wall warmer than the water (or a probe settling) would make it.
//   - Before (main 247ba01), CoolingWater2: the first steps' bend was read as
//     evaporation. 68.1 °C at 25 % (5 readings): open water over 80 % of the surface
//     settling at 22.0 °C, 7.9 % late with "not before now"; at 50 %: the same law,
//     18.7 % late. 56.5 °C at 10 % (4 readings): insufficient (too few readings for the
//     exponential, the dry law within reach of them); at 25 %: open water 80 %, 36.8 %
//     late; at 50 %: open water 10 %, 11.5 % late. 49.6 °C at 10 %: open water 80 %,
//     36.7 % late, "not before now"; at 25 %: 40 %, 37.4 % late; at 50 %: the dry law
//     settling at 29.4 °C (just under the open-water trigger), 11.4 % late.
//     CoolingWater4: 64.8 °C at 25 % and 53.8 °C at 10 % and 25 %: no answer or "not
//     before" alone (the exponential finds no decay in readings that speed up, and 12
//     readings are needed for h(T)); 53.8 °C at 50 %: dry law at 18.4 °C, 11.7 % late;
//     47.3 °C at 25 %: 21.1 °C, 19.2 % late; at 50 %: the exponential settling at
//     −21 °C, 24.9 % early, its closed interval ending before the truth.
//   - Kept: fitAfterVessel (vessel.go). For an unknown specimen taken for hot water,
//     the readings from 5 minutes on are fitted alone (dry or open-water law, as they
//     choose) and replace the fit of every reading when Akaike's criterion says so with
//     the readings left out counted as parameters. CoolingWater2 from 25 % on: the dry
//     law after 481 s, settling at 21.9–25.0 °C, misses of 0.2 / 3.6 % at 25 % and 0.8 /
//     0.5 / 0.1 % at 50 %, all closed intervals holding the truth. CoolingWater4 47.3 °C:
//     5.9 % late at 25 % and 9.9 % early at 50 % (settling at 18.3 and 6.5 °C), closed
//     intervals holding the truth. Median at 25 / 50 % elapsed 36.8 / 11.7 → 5.9 /
//     0.8 %, coverage 67 / 83 → 67 / 100 %.
//   - Left: at 10 % CoolingWater2 has 2–3 readings after 5 minutes (4-minute steps),
//     fewer than the 4 the water guess needs, and CoolingWater4's 4–5 readings are all
//     its speeding-up start, which no cooling law fits (the linear trend's 1.5 and 16 %
//     there are that straight start carried on): still no median. 68.1 °C at 25 % keeps
//     its open-water answer (3 readings after 5 minutes). CoolingWater4 64.8 °C at 25 and
//     50 % and 53.8 °C at 25 % have no fit of every reading to weigh the later readings'
//     against, so no transient is shown; 53.8 °C at 50 %: after 5 minutes the dry law
//     settles at 0.7 °C, outside the room prior's 22 ± 16 °C, so the whole fit stands.
//   - The open mugs (no film) gain too, taken as open water after the transient: the
//     mosaicData mug 60.3 °C at 50 % 5.4 → 0.6 %, 43.1 °C at 25 / 50 % 20.9 / 6.9 →
//     9.8 / 2.6 %, 32.7 °C at 10 / 25 / 50 % 79 / 20.0 / 7.3 → 13.9 / 11.0 / 4.3 %;
//     CoolingWater1 43.8 °C at 50 % 11.4 → 6.8 %, 32.9 °C at 25 % 29.3 → 16.4 % (at
//     50 % it was 16.6 % instead of 13.8 % until vesselMayWin spared curves the whole
//     fit follows within their noise); CoolingWater3 52.4 °C at 50 % 11.8 → 1.2 %
//     (a closed interval became "not before" 821 s, truth 1059 s), 43.5 °C at 25 / 50 %
//     31.0 / 17.9 → 29.8 / 5.2 %. Median at 25 / 50 % 20.0 / 7.3 → 11.0 / 2.6 %.
func oilFilmSegments(t *testing.T) []realSegment {
	t.Helper()
	const name = "mug-water-oil-film.csv"
	f := openReal(t, name)
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	var out []realSegment
	idx := map[string]int{}
	for i, row := range rows[1:] {
		set, cond, unit := row[0], row[2], row[3]
		j, ok := idx[set]
		if !ok {
			family := "mug"
			if cond == "oil_film" {
				family = "mug, oil film"
			}
			j = len(out)
			idx[set] = j
			out = append(out, realSegment{family: family, name: "fastR2 " + set})
		}
		tm, temp := parseReal(t, name, i+2, row[4]), parseReal(t, name, i+2, row[5])
		if unit == "F" {
			temp = fahrenheitToC(temp)
		}
		if set == "CoolingWater1" || set == "CoolingWater2" {
			tm *= 60
		}
		out[j].curve.Times = append(out[j].curve.Times, tm)
		out[j].curve.Celsius = append(out[j].curve.Celsius, temp)
	}
	return out
}

// rumfordAmbientF is the room around Rumford's cannon, °F: the ambient of the model
// T = 60 + 70·exp(−θ·t) that Bates & Watts (1988) fit to these readings (shared/realdata
// README; recalled from the book, not re-checked against it). The engine is given it
// as a measured ambient, held constant: a lab forecasting a cool-down logs its room on
// a channel of its own, and the source states the room's temperature, so the engine
// knows no more than a lab would (the baselines are not given it: the free
// exponential fits its own settling temperature, as a statistician would).
//
// Measured (issue 12), it moves nothing: at 50 % elapsed the two scored targets have
// 5 and 6 readings, under the 8 a lumped fit needs (LumpedSettings.MinPoints) and the
// 12 of the h(T) model. Tried and not kept: with the minimum at 3 readings beyond the
// fitted parameters (5 with the ambient given), the exponential toward 60 °F through
// the first 5–6 readings (4–14 and 4–16 minutes) answers 45.7 and 45.9 % early, its
// closed intervals ending 23 and 26 % before the truth (the linear trend 50.9 and
// 41.8 %; h(T) from a rough start, 44.3 and 44.2 % early): the readings fall 1 °F a
// minute over the first 3 minutes and 0.3 °F a minute over the last 13, at excesses of
// 65 and 52 °F over the room — the decay rate halves, more than a body cooling toward
// the room in still air slows (heat near the thermometer spreading into colder metal
// before the air takes it would do it; our reading, not checked) — so the honest
// answer at 5–6 readings rounded to 1 °F is none.
const rumfordAmbientF = 60

// rumfordSegment is Rumford's cannon from testdata/predict/rumford.csv, in °C and s,
// with the room at rumfordAmbientF as a measured ambient.
func rumfordSegment(t *testing.T) realSegment {
	t.Helper()
	minutes, fahrenheit := readRumford(t)
	c := make([]float64, len(fahrenheit))
	for i, f := range fahrenheit {
		c[i] = fahrenheitToC(f)
	}
	curve := minuteCurve(minutes, c)
	curve.Ambient = make([]float64, len(c))
	for i := range curve.Ambient {
		curve.Ambient[i] = fahrenheitToC(rumfordAmbientF)
	}
	return realSegment{"rumford", "Rumford's cannon (1798)", curve}
}

// Cell rests: readings with |current| below cellRestA for at least cellRestRows rows
// make one cool-down, read every cellStride-th reading (a 4 s logger).
//
// The eight rests, measured (issue 12; a throwaway diagnostic printed every forecast's
// model, fitted parameters and interval at 10, 25 and 50 % elapsed beside the fits to
// the whole rest, and the logged rows around each rest):
//
//   - Shape: each rest follows 361 s of discharge (about 3 A on average) that warms the
//     cell 1.5–3 K from inside. In rests 1–4 the surface sensor still rises 0.02–0.04 K
//     for 30–60 s after the current stops, and its speed then grows for some minutes
//     (rest 3: 0.035 K/min over the first 2.5 min, 0.04 K/min from 5 to 15 min, where
//     one exponential of the rest's 32 min would start at 0.06 and slow): the core,
//     heated more than the surface, still feeds it. From memory, a wound cell's radial
//     conductivity of about 0.2 W/m·K, ρc ≈ 2.8 MJ/m³·K, r = 9 mm and h ≈ 6–7 W/m²·K
//     (what the rests' τ of about 28 min gives) make Bi = h·r/k ≈ 0.3 — not lumped —
//     with the second radial mode gone in about a minute; the slow start lasts longer
//     than that.
//   - Settling offset: over each rest's last 20 minutes the cell reads 0.45, 0.28,
//     0.20, 0.17, 0.11, 0.32, 0.41 and 0.43 K above the chamber's logged temperature
//     (rests 1–8), some still falling by up to 0.06 K per 15 minutes. Not the chamber's
//     lag: lagging the chamber's log by 5 to 40 minutes moves these by at most 0.06 K.
//     Not a fixed sensor offset either: it follows the chamber's mean (0.11–0.17 K
//     where that reads 19.76–19.79 °C, 0.32–0.45 K at 19.95–20.02 °C), so the settled
//     cell wanders 19.90–20.45 °C while the chamber's sensor wanders 19.76–20.02 °C,
//     and within one rest it changed by up to 0.18 K (rest 6: 0.14 K before its
//     discharge, 0.32 at its end). The air or walls the cell sees are not what the
//     chamber's sensor reads. The 90 % targets lie 0.3–0.7 K above the chamber's
//     reading, the offset 40–75 % of that.
//   - Misses at 50 % elapsed (7 of 24 with lagAmbient, 8 before): six are forecasts too
//     early whose late end came before the truth, all where the offset is 0.3 K or
//     more: rest 1 at its 75 and 90 % targets (−18 and −42 % of the time left, late
//     ends −7 and −31 %; h(T), τ 30 and 34 min), rest 6 at 75 and 90 % (−16, −29 %;
//     h(T), τ 23–25 min; its offset grew during the rest), rest 7 at 90 % (−33 %;
//     lumped, τ 26 min), rest 8 at 90 % (−23 %; h(T), τ 28 min). Both models settle at
//     the chamber's reading (lagged) and take it as exact. The seventh is the slow
//     start: rest 3's target at 50 % forecast 51 % late, its early end 10 % after the
//     truth (lumped, τ 44 min against 31 over the whole rest). lagAmbient brought in
//     rest 2 at 90 % (late end −5 → +2 %) and rest 8 at 75 % (−1 → +3 %) and lost rest
//     6 at 75 % (+3 → −5 %).
//   - Kept: the interval carries the measured ambient's offset from where the
//     specimen settles as a level error (IntervalSettings.AmbientOffset, 0.1 K by
//     default: a room channel checked against the specimen's sensor side by side;
//     ambientOffsetSD in forecast.go gives the argument and the benchmark's price).
//     Misses at 25 / 50 % elapsed 3 / 7 → 2 / 2: left are rest 1 at 90 % (25 and 50 %,
//     late ends −2 and −1 % of the time left), rest 6 at 90 % (25 %, −4 %) and rest 7 at
//     90 % (50 %, −4 %), offsets of 0.4 K and more; the central estimates do not move.
//   - Kept: afterTransient (analyze.go) leaves the first eighth of a segment's span
//     out of the fit when Akaike's criterion over every reading prefers the fit of the
//     rest, each reading left out counted as a parameter (its share chosen on the
//     benchmark, not here). Cells at 10 / 25 / 50 % elapsed 23.7 / 14.3 / 10.1 →
//     17.8 / 11.2 / 10.5 %, coverage 100 / 92 / 92 → 100 / 92 / 100 %: at 25 % rest 1
//     at 50 % +15.7 → +8.1 %, rest 2 at 75 % +19.9 → +11.2 %, rest 7 at 50 % +21.4 →
//     +16.6 %, rest 2 at 90 % −8.6 → −15.0 %; rest 3 stays 53–58 % late (its slow
//     start lasts about 15 minutes, past the eighth left out) and the offset's 90 %
//     targets early. Below, the figures before it.
//   - Errors at 25 % elapsed (median 14.3 %; 15.3 % before lagAmbient): the 50 %
//     targets, crossed 12–23 minutes in, come late where the slow start lengthens the
//     early fit's τ (rest 2: 48 min, +87 %; rest 3: 44–48 min, +53 to +58 % on all
//     three of its targets), and the 90 % targets early where the offset is large (rest
//     1 −33 %, rest 6 −30 %, rest 7 −23 %, rest 8 −19 %; rests 1, 6 and 8 are the three
//     misses at 25 %). At 10 % (19–90 readings, the first 1.3–6 minutes) the fits see
//     the slow start alone: τ from 20 to 73 minutes.
//   - Tried and not kept: fitting from the readings' second quarter when the first is
//     slower than the second beyond the noise (the slow start; speedFloor's own test):
//     cells at 25 % 14.3 → 12.1 % but coverage 88 → 83 % and width 1.28 → 0.64, at 50 %
//     coverage 71 → 67 %; the thick specimens described 9.1 → 13.0 % at 25 % (coverage
//     79 → 64 %) and the heater board under its floor. Dropping a fixed first 60 s of
//     each rest (no rule, an upper figure) gave 10.1 % at 25 %. Forecasting toward the
//     air's last value instead of the lagged one (lagAmbient's doc): 15.1 / 11.2 % at
//     25 / 50 %. The fitted offset under a prior (trial/ambient-offset, README) was not
//     repeated: an offset that moves by 0.18 K within a rest is not a constant to fit
//     from its first half, nor one to learn from the settled readings before it.
const (
	cellRestA    = 0.05
	cellRestRows = 1800
	cellStride   = 4
)

// cellSegments reads the rest periods of cell-18650-rest-cooldowns.txt: tab-separated
// time (s, restarting between test steps), current, voltage, power, cell surface °C,
// chamber °C; the chamber temperature is the measured ambient.
func cellSegments(t *testing.T) []realSegment {
	t.Helper()
	const name = "cell-18650-rest-cooldowns.txt"
	f := openReal(t, name)
	defer f.Close()
	sc := bufio.NewScanner(f)
	line, header := 0, true
	var out []realSegment
	var run CurveFile
	flush := func() {
		if len(run.Times) >= cellRestRows {
			c := CurveFile{}
			for i := 0; i < len(run.Times); i += cellStride {
				c.Times = append(c.Times, run.Times[i]-run.Times[0])
				c.Celsius = append(c.Celsius, run.Celsius[i])
				c.Ambient = append(c.Ambient, run.Ambient[i])
			}
			out = append(out, realSegment{"18650 cell", fmt.Sprintf("cell rest %d", len(out)+1), c})
		}
		run = CurveFile{}
	}
	for sc.Scan() {
		line++
		if header {
			header = !strings.HasPrefix(sc.Text(), "***End_of_Header***")
			continue
		}
		fs := strings.Fields(sc.Text())
		if len(fs) < 6 {
			continue
		}
		var v [6]float64
		for i := range v {
			v[i] = parseReal(t, name, line, fs[i])
		}
		if math.Abs(v[1]) >= cellRestA || len(run.Times) > 0 && v[0] < run.Times[len(run.Times)-1] {
			flush()
			if math.Abs(v[1]) >= cellRestA {
				continue
			}
		}
		run.Times = append(run.Times, v[0])
		run.Celsius = append(run.Celsius, v[4])
		run.Ambient = append(run.Ambient, v[5])
	}
	if err := sc.Err(); err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	flush()
	return out
}

// heaterMinRows is the fewest rows of a heater step kept as a segment.
const heaterMinRows = 60

// The heater board's six steps, measured (issue 12; a throwaway diagnostic printed the
// readings' speed per 10 s and the engine's answer at every cutoff):
//
//   - Shape: every step starts with the sensor catching up — the speed rises for
//     10–50 s (heater 1 at 100 %: 0.06 → 0.26 K/s in 30 s; at 5 % it still rises for
//     10 s after the power fell) — then holds almost constant (0.26, 0.13, 0.09, 0.08
//     K/s) until 80–160 s, and slows only after that (to 0.11, 0.05, 0.06, 0.02 K/s by
//     the step's end). A second-order response: heater and sink, then the sensor.
//   - Cutoffs: at 10 % of the time to a target there are 5–18 readings, the lag phase
//     alone; at 25 %, 12–44; at 50 %, 23–87, all inside the constant-speed stretch. So
//     the readings "never slow" where they are scored: speedFloor (quarter by quarter
//     slowing) never applies, and trendReaches always does.
//   - Why the rules withheld: heater 1's first step below 30 °C and all of heater 2's
//     50 % step lie within 8 °C of the room prior (direction unknown); heater 1 at 70 %
//     and heater 2 at 80 % are still at their extreme (speedBound, which needs the
//     slowing); the cool-downs (heater 1 at 5 %, heater 2 at 10 %) get a direction from
//     their fit but, once they turn, settling temperatures of −3 to 22 °C with
//     uncertainties up to ±610 °C, so at most the profile's "not before".
//   - What the models fit: the exponential finds no resolvable decay (constant speed is
//     no curvature); h(T) puts the level at 23–84 °C and rising with every cutoff,
//     residuals lag-1 0.63–0.90, its own backtest's model-form term 0.7–1.5 of the
//     remaining time.
//   - Central estimates tried in a prototype and not kept: the last quarter's speed
//     held (no curvature) misses by a median 24 % at 25 % and 19 % at 50 % (the linear
//     trend 38 % and 13 %) — it is the early bound itself, early by construction, and
//     loses at 50 %; an exponential with the curvature of the last half (a quadratic's
//     speed and acceleration) 50 % and 26 % — early too, since a chain of lags slows
//     later than its present curvature says (the speed's decay rate rises toward the
//     slowest stage's). For the same reason no late end follows from the readings: the
//     level of a powered part is its power times its thermal resistance, neither known.
//     Second-order fits T∞ + A·e^(−t/τ1) + B·e^(−t/τ2) (least squares over a grid of
//     τ1 > τ2), measured on the 18 scored cases: free, 34.8 % at 25 % and 37.2 % at
//     50 %; from rest (zero speed at the step), 37.9 % and 19.9 % — no better than the
//     linear trend at 25 % and worse at 50 %: at the cutoffs the readings hold τ2 (the
//     rise) and A/τ1 (the straight stretch), not τ1 and T∞ apart, so the fitted level
//     falls anywhere, often short of the target (no crossing in 19 and 22 of the 54
//     trials at 10–50 %).
//   - Kept as the central estimate beside peakBound's "not before" (deadtime.go): a
//     first-order step response after a dead time, fitted by least squares over a grid
//     of dead times and time constants up to 10⁴ spans and the ramp (the process
//     reaction curve of common practice): where the readings show no slowing it is
//     their straight stretch after the lag carried on, where they slow, an exponential.
//     31.6 % at 25 % and 11.3 % at 50 % (linear trend 37.9 % and 12.8 %; the free
//     exponential answers none), the real curves' median at 25 % from 31.0 to 21.0 %
//     and at 50 % from 18.7 to 11.7 %; raised to the "not before" when sooner, with no
//     interval of its own, so coverage stays peakBound's. Sensitive to its grids: in a
//     prototype without the ramp, over dead-time grids of 20–80 points and time
//     constants capped at 10^2.7–10^5 s, 31.7–48.1 % at 25 % and 9.0–13.7 % at 50 %;
//     with the cap at 10^3.5 s or more (the straight stretch within reach), 31.7–36.7 %
//     and 9.0–11.2 %, under the linear trend throughout. On the benchmark it answers the ovens
//     without a set point (direction unknown): median at 10 % none → 42.3 % (linear
//     69.9 %), at 50 % none → 47.1 % (free exponential 46.6 %, linear 62.0 %).
//   - Where the best dead-time fit settles short of a level the readings' own trend
//     still reaches (peakBound asks only then), the best ramp's crossing stands in,
//     unless it comes sooner than the bound (then it runs faster than the readings
//     allow, and no estimate is given): heater 2 at 80 % (its early fast mode, below,
//     bends the fit to a level short of the targets) got estimates 24.6 and 21.8 % off
//     at 25 % and 4.1 % at 50 %, where there were none: the board's medians 31.6 /
//     11.3 → 24.6 / 9.0 % at 25 / 50 %, no answer without an estimate 28 → 17 % and 6 →
//     0 %; the real curves' median at 50 % 9.0 → 8.8 % (25 % unchanged, 18.6 %); the
//     benchmark, dense and thick tables unchanged (one dense oven, run46 at 25 %, had a
//     ramp 74 % early before the bound's rule; it keeps "not before" alone).
//   - Kept: peakBound (peakspeed.go), "not before" from the readings' own speed, whose
//     logarithm is concave after a step through a chain of lags: 9 of 18 covered at
//     25 %, 11 of 18 at 50 %, none after the truth, over quarters of the readings. Over
//     thirds or halves where quarters are too short or too noisy (peakFloor's
//     peakWindows): 14 of 18 at 25 % and 14 of 18 at 50 %, and 1 of 18 at 10 %, none
//     after the truth — the gain is heater 2's noisy steps (±0.06 °C against 0.05 K/s)
//     and cutoffs of 10–19 readings. The cool-downs' h(T) fits (heater 1 at 5 %, heater
//     2 at 10 %) gave central estimates beside "not before now"; peakFloor raises that
//     early end too (predictedFrom): 15 of 18 at 25 %, 18 of 18 at 50 %. Still
//     uncovered at 25 %: heater 2 at 80 % at 13 readings and at 10 % at 12 and 18 (the
//     speed toward the level not beyond the noise over halves). At 10 %, 17 of 18: the
//     lag phase, whose first readings' speed is within the noise of zero, so its rise
//     (the logarithm's slope) has no bound; the speed held at its present value is no
//     bound either way (it rises, then falls below it).
//
// Measured again (issue 12, 2026-12-04; go test ./predict -run TestRealTrials -realdiag
// -v prints every trial):
//
//   - The six segments, read at 1 s. Heater 1 at 100 % from 20.9 °C: a lag of about
//     20 s (speed 0.05 → 0.26 K/s), straight to about 70 s, slowing to 0.1 K/s by 190 s.
//     At 5 % from 55 °C: still rises 0.6 K for 10 s after the power falls, then falls at
//     up to 0.15 K/s, slowing to 0.05 K/s. At 70 % from 37.8 °C, still falling: falls
//     0.25 K for 6 s, turns, speeds up to 0.08–0.12 K/s by 40 s, 0.06 K/s at the end.
//     Heater 2 has a fast mode heater 1 lacks: within 1–3 s of each change of its power
//     its reading moves 0.35–0.5 K the same way (+0.4 K at 0 → 50 %, +0.4 K at 50 →
//     80 %, −0.5 K at 80 → 10 %) against noise of ±0.2 K — its sensor close to its own
//     transistor through a small heat capacity, or a share of the heater's current in
//     the sensor's ground; the readings cannot tell. Heater 2 at 50 % from 21.7 °C:
//     after it, about 0.07 K/s to the end. At 80 % from 35.6 °C (still rising from the
//     50 % step): 0.05–0.09 K/s, then a plateau at 42.0 ± 0.2 °C from 120 s while
//     heater 1, at 5 %, cools from 45 to 38 °C beside it — a neighbour's loss no single
//     channel sees. At 10 % from 42.3 °C: the fast drop, a 10 s plateau, then 0.04–0.05
//     K/s down while heater 1 at 70 % warms beside it.
//   - At 10 % elapsed there are 5–18 readings (4–17 s): heater 1's lag (at 100 %, 20.83
//     to 20.96 °C over 7 s, within the noise of still, before a target the readings
//     then reach at 0.24 K/s on average) and heater 2's fast mode followed by noise.
//     fitDeadTime needs 10 readings (12 of 18 have them), peakFloor two windows of 5
//     moving beyond the noise (1 of 18). No honest answer was found: inside a lag the
//     speed can still rise by any factor, and a fast mode is not log-concave with the
//     slow one (its speed falls to zero, then rises), so those readings bound nothing.
//     A central estimate beside only "not before now" where the dead-time fit crosses
//     (measured, not kept): 2 of 18 more answers (no point 94 → 83 %), 68 % off where
//     answered; the median stays none.
//   - Tried on the 18 targets, not kept (the board's median at 25 / 50 %; the
//     dead-time fit alone, before the bound raises it, 25.7 / 10.7 %):
//     a second time constant for the lag, base + K·(1 − (τ1·e^(−u/τ1) −
//     τ2·e^(−u/τ2))/(τ1 − τ2)) after a dead time: free, 79.0 / 23.0 %; τ1 ≥ 3τ2, 28.0 /
//     18.0 %; τ1 at a fixed ratio to τ2 (3, 5, 10, 20): none / 44.6, none / 31.4, 79.0 /
//     19.1, 79.0 / 10.6 % (levels short of the target); τ1 = ∞, a ramp seen through a
//     lag, 28.0 / 18.1 % (heater 1 at 100 %, 25 %: a speed of 0.40 K/s where it peaks
//     at 0.27); n equal lags (the regularised incomplete gamma, n = 2 or 3): none at 25
//     and 50 % (levels short on 13 of 18 at 25 %). The fast mode as a term of its own,
//     J·(1 − e^(−t/τf)) with τf 0.5–4 s: 39.1 / 12.4 %. Time constants under 3 reading
//     intervals left out: no change (the fits then catch the fast mode with τ of 3.2–6.2
//     s). The ramp preferred unless the exponential lowers n·ln(SSE) by more than 2
//     (Akaike; the ramp has one parameter fewer), in the engine: 28.0 / 14.9 % (over the
//     linear trend's 12.8 % at 50 %). The readings' last speed held where it still
//     rises beyond the noise, when sooner than the fit's crossing: over the first
//     window count showing the rise, 25.2 / 12.4 %, real curves at 50 % 9.0 → 10.1 %
//     (at 25 % only halves show it, the earlier half being the lag, and the held speed
//     makes the far targets early); over quarters only, no change. The dead-time fit's
//     crossing as the central estimate of every fixed target a physics fit leaves
//     open-ended (within its level's uncertainty, no measured ambient), which heater 1 at
//     5 % takes at 25 % (47.9 → 7 %): real curves 18.6 → 16.4 % at 25 %, but benchmark
//     ovens at 10 % 8.7 → 30.6 %, fans at 50 % 4.7 → 11.0 %, mugs at 50 % 2.6 → 4.3 %,
//     dense ovens at 10 % 3.2 → 32.8 %; the same only where the dead-time fit's own
//     backtest (the same cutoffs and windows) beat the model's: 3 of 4 switched real
//     trials better, 10 of 11 switched benchmark trials worse (run36 at 50 % 2.8 →
//     31.5 %, run44 at 10 % 8.7 → 40.8 %) — a backtest looking at most 2.3 spans ahead
//     does not tell which crossing is better 3–9 spans ahead.
//
// heaterSegments reads transistor-heater-steps.csv: for each of the two heaters, one
// segment from each change of its power to the next (the other heater's steps
// disturb it a little, as a neighbour on a rack would).
func heaterSegments(t *testing.T) []realSegment {
	t.Helper()
	const name = "transistor-heater-steps.csv"
	f := openReal(t, name)
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	var out []realSegment
	for h := range 2 {
		var seg CurveFile
		var start, power float64
		flush := func() {
			// The first piece, before the heater's first step, only shows its
			// neighbour warming it.
			if len(seg.Times) >= heaterMinRows && start > 0 {
				out = append(out, realSegment{"heater board", fmt.Sprintf("heater %d at %.0f %% from %.0f s", h+1, power, start), seg})
			}
			seg = CurveFile{}
		}
		for i, row := range rows[1:] {
			tm := parseReal(t, name, i+2, row[0])
			p := parseReal(t, name, i+2, row[1+h])
			temp := parseReal(t, name, i+2, row[3+h])
			if i == 0 || p != power {
				flush()
				start, power = tm, p
			}
			seg.Times = append(seg.Times, tm-start)
			seg.Celsius = append(seg.Celsius, temp)
		}
		flush()
	}
	return out
}

// realLevels are the targets scored on a measured segment: the levels at these shares
// of the way from its start to its end (both smoothed), which the curve crosses.
var realLevels = []float64{0.5, 0.75, 0.9}

// smoothed is a centred moving average over about a fiftieth of the readings (at
// least one reading each side once there are 100), so that noise does not make the
// truth of a crossing.
func smoothed(c []float64) []float64 {
	k := len(c) / 100
	out := make([]float64, len(c))
	for i := range c {
		lo, hi := max(0, i-k), min(len(c)-1, i+k)
		var s float64
		for j := lo; j <= hi; j++ {
			s += c[j]
		}
		out[i] = s / float64(hi-lo+1)
	}
	return out
}

// realTarget is one scored target of a segment: its level and true crossing time.
type realTarget struct{ level, crossing float64 }

// targetsOf returns the segment's targets: at each of realLevels, the first time
// the smoothed readings cross it (interpolated). A segment that changes by less
// than 1 K has none.
func targetsOf(c CurveFile) []realTarget {
	s := smoothed(c.Celsius)
	first, last := s[0], s[len(s)-1]
	if math.Abs(last-first) < 1 {
		return nil
	}
	side := sign(first - last)
	var out []realTarget
	for _, share := range realLevels {
		level := first + share*(last-first)
		for i := 1; i < len(s); i++ {
			if side*(s[i]-level) <= 0 {
				f := (s[i-1] - level) / (s[i-1] - s[i])
				out = append(out, realTarget{level, c.Times[i-1] + f*(c.Times[i]-c.Times[i-1])})
				break
			}
		}
	}
	return out
}

// minRealReadings is the fewest readings up to a cutoff for a trial to be scored.
const minRealReadings = 4

// realAccuracy scores the engine and the two baselines on every measured segment at
// each elapsed fraction of the time from the segment's start to each target's
// crossing; keys are "method/fraction/family" and "method/fraction/all".
func realAccuracy(t *testing.T) map[string]*score {
	methods := map[string]method{"engine": engine, "exp3": exponential3, "linear": linearTrend}
	out := map[string]*score{}
	for _, seg := range realSegments(t) {
		for _, tg := range targetsOf(seg.curve) {
			for _, frac := range fractions {
				part := seg.curve.Until(frac * tg.crossing)
				if len(part.Times) < minRealReadings {
					continue
				}
				for name, m := range methods {
					tr := judgeAt(m, part, tg.level, tg.crossing)
					for _, g := range []string{"all", seg.family} {
						key := fmt.Sprintf("%s/%.2f/%s", name, frac, g)
						if out[key] == nil {
							out[key] = &score{}
						}
						out[key].add(tr)
					}
				}
			}
		}
	}
	return out
}

// realFamilies are the families of measured curves, in table order.
var realFamilies = []string{"all", "mug", "mug, oil film", "rumford", "18650 cell", "heater board"}

// TestRealSegments checks the loaders against the files' README: the number of
// segments per family and their span.
func TestRealSegments(t *testing.T) {
	count := map[string]int{}
	for _, seg := range realSegments(t) {
		count[seg.family]++
		if n := len(seg.curve.Times); n < heaterMinRows/5 || len(targetsOf(seg.curve)) != len(realLevels) {
			t.Errorf("%s: %d readings, %d of %d targets crossed", seg.name, n, len(targetsOf(seg.curve)), len(realLevels))
		}
	}
	// 1 + 2 mugs of water, 2 with an oil film, the cannon, 8 full rests of the cell
	// (its README: "about nine"; the 90-minute rests after each discharge step), and
	// 3 + 3 power steps of the two heaters.
	want := map[string]int{"mug": 3, "mug, oil film": 2, "rumford": 1, "18650 cell": 8, "heater board": 6}
	for fam, n := range want {
		if count[fam] != n {
			t.Errorf("%s: %d segments, want %d", fam, count[fam], n)
		}
	}
}

// TestAccuracyReal prints the accuracy table on the measured curves of
// ../shared/realdata (go test ./predict -run TestAccuracyReal -v): every segment, at
// 10, 25 and 50 % of the time to targets at 50, 75 and 90 % of its observed change,
// the engine beside a free three-parameter exponential and a linear trend over the
// last 10 minutes. It holds the engine to the floors it reaches today (not the
// issue's goals; see README "How well it works").
func TestAccuracyReal(t *testing.T) {
	if testing.Short() {
		t.Skip("real-curve accuracy skipped with -short")
	}
	sc := realAccuracy(t)
	var b strings.Builder
	fmt.Fprintf(&b, "\n%-14s %-7s %5s |%s\n", "family", "method", "frac", tableHead)
	for _, fam := range realFamilies {
		for _, m := range []string{"engine", "exp3", "linear"} {
			for _, fr := range fractions {
				if s := sc[fmt.Sprintf("%s/%.2f/%s", m, fr, fam)]; s != nil {
					fmt.Fprintf(&b, "%-14s %-7s %4.0f%% | %s\n", fam, m, 100*fr, s.row())
				}
			}
		}
	}
	t.Log(b.String())
	for _, fr := range fractions {
		if s := sc[fmt.Sprintf("engine/%.2f/all", fr)]; s.open > 0 {
			t.Logf("engine at %.0f %%: %d open-ended answers, %d of them with the early bound after the true crossing, %d opening at the last reading", 100*fr, s.open, s.openLate, s.openVacuous)
		}
	}
	realFloors(t, sc)
}

// realFloors holds the engine to what it reaches on the measured curves today (the
// floors, not the goals): on the cell rests (measured chamber ambient), the
// oil-film mugs (water without evaporation, at 25 and 50 % elapsed) and the open mugs
// (water evaporating),
// a median relative error no worse than
// the linear trend's or the free exponential's, and below the figures measured when
// the floors were set; no
// open-ended answer whose early bound came after the truth; coverage at 25 % elapsed
// over all families and over the mugs.
func realFloors(t *testing.T, sc map[string]*score) {
	t.Helper()
	med := func(key string) float64 { return quantile(sc[key].errs, 0.5) }
	for _, c := range []struct {
		family string
		frac   float64
		max    float64
	}{
		{"18650 cell", 0.25, 0.13}, // 11.2 % measured (14.3 % before afterTransient, 15.3 % before lagAmbient, 21.6 % before smoothAmbient took the first span's mean)
		{"18650 cell", 0.50, 0.12}, // 10.5 % (10.1 %, 11.7 %, 18.3 %; the free exponential 17.5 %)
		// The oil-film mugs (no evaporation; the diagnosis beside oilFilmSegments):
		// 5.9 / 0.8 % at 25 / 50 % measured since fitAfterVessel left out the mug's
		// first minutes (36.8 / 11.7 % before it, 12.9 % at 50 % before the open-water
		// law; the linear trend 20.2 / 17.4 %). At 10 % still no median (linear 16.0 %):
		// the readings after the first minutes are too few there.
		{"mug, oil film", 0.25, 0.10},
		{"mug, oil film", 0.50, 0.05},
		// The mugs of water with an open surface (evaporation.go): 11.6 / 11.0 / 2.6 %
		// measured (11.6 / 20.0 / 7.3 % before fitAfterVessel; no point at 10 and 25 %,
		// 42 % where answered at 50 %, before the open-water law; the linear trend
		// 73.7 / 62.4 / 42.9 %).
		{"mug", 0.10, 0.15},
		{"mug", 0.25, 0.15},
		{"mug", 0.50, 0.05},
		// The heater board, central estimates from the dead-time fit beside "not
		// before" (deadtime.go): 24.6 / 9.0 % measured (31.6 / 11.3 % before the ramp
		// stood in where the fit settles short of a level the readings' trend still
		// reaches, none before the dead-time fit; the linear trend 37.9 / 12.8 %, the
		// free exponential none).
		{"heater board", 0.25, 0.28},
		{"heater board", 0.50, 0.10},
	} {
		key := fmt.Sprintf("engine/%.2f/%s", c.frac, c.family)
		if m := med(key); m > c.max {
			t.Errorf("%s: median relative error %.1f %%, floor %.0f %%", key, 100*m, 100*c.max)
		}
		for _, base := range []string{"linear", "exp3"} {
			if m, b := med(key), med(fmt.Sprintf("%s/%.2f/%s", base, c.frac, c.family)); m > b {
				t.Errorf("%s: median relative error %.1f %% is worse than %s's %.1f %%", key, 100*m, base, 100*b)
			}
		}
	}
	// An open-ended answer says "not before" its early bound; one whose bound came
	// after the true crossing would tell a technician to wait less than the curve
	// needed, never more — but it is still a wrong statement: none measured.
	for _, fr := range fractions {
		if s := sc[fmt.Sprintf("engine/%.2f/all", fr)]; s.openLate > 0 {
			t.Errorf("%.0f %% elapsed: %d of %d open-ended answers ('not before') came after the true crossing", 100*fr, s.openLate, s.open)
		}
	}
	// Coverage at 25 % elapsed, an unanswered forecast or a "not before now" counted as
	// a miss: 88 % over all families measured (86 % before the measured ambient's offset
	// entered the intervals, ambientOffsetSD; 82 % before profileMinPoints let the
	// profile's "not before" stand on the mugs' first 4–7 readings; 80 % before peakFloor raised a "not before now" beside a central estimate, 71 % before it took thirds and halves; 54 % before the heater board's power
	// steps got "not before" from the readings' own speed after a step, peakBound, and
	// a closed early end at the last reading gave way to the profile's bound; 46 % before open-ended answers; 38 % by
	// closed intervals alone; 59 % before smoothAmbient took the first span's mean,
	// which narrowed the cell rests' intervals from 1.61 to 1.38 of the remaining time
	// at 25 % and 0.71 to 0.38 at 50 %: now the 90 % targets of the three rests whose
	// cell settles 0.3–0.4 K above the chamber's reading are missed, early — the
	// measured ambient is taken as exact), 10 of 14 on the two mug families (2 of 14 before, all of
	// the gain open-ended; 12 of 14 since profileMinPoints); the heater board's power steps, 15 of 18 at 25 % and 18 of
	// 18 at 50 %, all by "not before" (14 and 14 before peakFloor also raised the "not
	// before now" beside the cool-downs' h(T) central estimates; 9 and 11 with
	// peakFloor over quarters only, before it took thirds and halves where quarters
	// are too short or noisy;
	// none before peakBound: the direction rules leave them insufficient, and the
	// readings do not slow quarter by quarter for speedFloor). At 50 %, 14 of 15 on the
	// mugs (13 before fitAfterVessel's closed interval held CoolingWater4 at 47.3 °C;
	// 11 before the readings' own speed raised "not before now" answers: speedFloor).
	for _, c := range []struct {
		families []string
		frac     float64
		min      float64
	}{
		{[]string{"all"}, 0.25, 0.86}, {[]string{"mug", "mug, oil film"}, 0.25, 0.80}, {[]string{"mug", "mug, oil film"}, 0.50, 0.90},
		{[]string{"heater board"}, 0.25, 0.80}, {[]string{"heater board"}, 0.50, 0.95},
		// The cell rests at 50 %: 22 of 24 (17 before the ambient offset entered the
		// intervals, 16 before lagAmbient; see cellSegments).
		{[]string{"18650 cell"}, 0.50, 0.85},
		// Every family at 50 %: 92 % (83 % before the ambient offset).
		{[]string{"all"}, 0.50, 0.88},
	} {
		var covered, judged int
		for _, fam := range c.families {
			s := sc[fmt.Sprintf("engine/%.2f/%s", c.frac, fam)]
			covered, judged = covered+s.covered, judged+s.judged
		}
		if cov := float64(covered) / float64(judged); cov < c.min {
			t.Errorf("%v at %.0f %%: coverage %.0f %% over %d forecasts, floor %.0f %%", c.families, 100*c.frac, 100*cov, judged, 100*c.min)
		}
	}
	var covered, judged int
	for _, fr := range fractions {
		s := sc[fmt.Sprintf("engine/%.2f/18650 cell", fr)]
		covered, judged = covered+s.covered, judged+s.judged
	}
	if c := float64(covered) / float64(judged); c < 0.90 {
		t.Errorf("cell rests: 90 %% interval coverage %.0f %% over %d forecasts, floor 90 %% (94 %% measured; 86 %% before the ambient offset, 85 %% before lagAmbient)", 100*c, judged)
	}
}
