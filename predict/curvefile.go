package predict

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// CurveFile is a recorded curve as `settle fit` reads it.
type CurveFile struct {
	// Times are the rows' t_s values, seconds, non-decreasing.
	Times []float64
	// Celsius holds temp_c, NaN where the cell is empty or not a number.
	Celsius []float64
	// Ambient holds ambient_c (NaN where missing), nil when the file has no such column.
	Ambient []float64
}

// ReadCurveCSV reads a CSV with a header naming the columns t_s and temp_c and
// optionally ambient_c (other columns are ignored). An empty or non-numeric
// temperature cell is a missing reading (NaN); a row without a usable t_s is
// skipped. Times must not decrease. Errors name the source and the line.
func ReadCurveCSV(r io.Reader, name string) (CurveFile, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	cr.ReuseRecord = true
	head, err := cr.Read()
	if err != nil {
		return CurveFile{}, fmt.Errorf("%s: header: %w", name, err)
	}
	col := map[string]int{}
	for i, h := range head {
		col[strings.TrimSpace(strings.TrimPrefix(h, "\ufeff"))] = i
	}
	ti, okT := col["t_s"]
	ci, okC := col["temp_c"]
	if !okT || !okC {
		return CurveFile{}, fmt.Errorf("%s: header %q must name the columns t_s and temp_c", name, strings.Join(head, ","))
	}
	ai, okA := col["ambient_c"]
	var out CurveFile
	for line := 2; ; line++ {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return CurveFile{}, fmt.Errorf("%s: %w", name, err)
		}
		t := cell(rec, ti)
		if math.IsNaN(t) {
			continue
		}
		if n := len(out.Times); n > 0 && t < out.Times[n-1] {
			return CurveFile{}, fmt.Errorf("%s line %d: t_s %g is before the previous row's %g", name, line, t, out.Times[n-1])
		}
		out.Times = append(out.Times, t)
		out.Celsius = append(out.Celsius, cell(rec, ci))
		if okA {
			out.Ambient = append(out.Ambient, cell(rec, ai))
		}
	}
	return out, nil
}

// cell parses field i of rec as a finite number, NaN when absent or not one.
func cell(rec []string, i int) float64 {
	if i >= len(rec) {
		return math.NaN()
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(rec[i]), 64)
	if err != nil || math.IsInf(v, 0) {
		return math.NaN()
	}
	return v
}

// Until returns the rows with t_s ≤ s.
func (c CurveFile) Until(s float64) CurveFile {
	n := 0
	for n < len(c.Times) && c.Times[n] <= s {
		n++
	}
	out := CurveFile{Times: c.Times[:n], Celsius: c.Celsius[:n]}
	if c.Ambient != nil {
		out.Ambient = c.Ambient[:n]
	}
	return out
}

// FilledAmbient returns the ambient column with each missing cell taking the last
// measured value before it (the first measured value for leading gaps); nil when the
// file has no ambient column or no value in it.
func (c CurveFile) FilledAmbient() []float64 {
	if c.Ambient == nil {
		return nil
	}
	out := make([]float64, len(c.Ambient))
	last := math.NaN()
	for i, v := range c.Ambient {
		if !math.IsNaN(v) {
			last = v
		}
		out[i] = last
	}
	if math.IsNaN(last) {
		return nil
	}
	for i := len(out) - 2; i >= 0; i-- {
		if math.IsNaN(out[i]) {
			out[i] = out[i+1]
		}
	}
	return out
}
