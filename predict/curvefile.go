package predict

import (
	"errors"
	"fmt"
	"io"
	"math"
	"strings"
	"unicode/utf8"

	"github.com/settle-lab/settle/internal/csvdialect"
)

// CurveFile is a recorded curve as `settle fit` reads it.
type CurveFile struct {
	// Times are the rows' t_s values, seconds, non-decreasing.
	Times []float64
	// Celsius holds temp_c, NaN where the cell is empty or not a number.
	Celsius []float64
	// Ambient holds ambient_c (NaN where missing), nil when the file has no such column.
	Ambient []float64
	// Malformed are the first MaxMalformed rows left out as malformed (a missing cell,
	// an extra cell, a time that is not a number), with their line numbers;
	// MalformedRows counts them all.
	Malformed     []RowProblem
	MalformedRows int
}

// MaxMalformed is how many malformed rows a CurveFile lists; the rest are counted.
const MaxMalformed = 5

// RowProblem is a row of a curve file left out, and why.
type RowProblem struct {
	Line int
	Msg  string
}

// MalformedNote says which rows were left out as malformed: the first MaxMalformed
// with their line numbers, then a count. Empty when none were.
func (c CurveFile) MalformedNote() string {
	if c.MalformedRows == 0 {
		return ""
	}
	parts := make([]string, len(c.Malformed))
	for i, p := range c.Malformed {
		parts[i] = fmt.Sprintf("line %d: %s", p.Line, p.Msg)
	}
	s := fmt.Sprintf("%d malformed rows left out (%s", c.MalformedRows, strings.Join(parts, "; "))
	if more := c.MalformedRows - len(c.Malformed); more > 0 {
		s += fmt.Sprintf("; and %d more", more)
	}
	return s + ")."
}

// The column names ReadCurveCSV takes, first choice first: settle's own curve files
// (t_s, temp_c, ambient_c) and what `settle export` writes (elapsed_s, celsius).
var (
	timeColumns    = []string{"t_s", "elapsed_s"}
	celsiusColumns = []string{"temp_c", "celsius"}
	ambientColumns = []string{"ambient_c"}
)

// ReadCurveCSV reads a CSV of settle's dialect family (internal/csvdialect: ',' or
// ';' separated, '.' or ',' decimal marks) with a header naming the time in seconds
// (t_s, or elapsed_s as `settle export` writes it), the temperature (temp_c or
// celsius) and optionally a measured ambient (ambient_c); other columns are ignored.
// An empty or non-numeric temperature cell is a missing reading (NaN). A row with
// fewer or more cells than the header, or a time that is not a number, is left out
// and listed in Malformed with its line number. Times must not decrease. Errors name
// the source and the line; empty input is an error that says so.
func ReadCurveCSV(r io.Reader, name string) (CurveFile, error) {
	cr, err := csvdialect.NewReader(r)
	if err != nil {
		return CurveFile{}, fmt.Errorf("%s: %w", name, err)
	}
	ti, ci, ai := cr.Column(timeColumns...), cr.Column(celsiusColumns...), cr.Column(ambientColumns...)
	if ti < 0 || ci < 0 {
		head := strings.Join(cr.Header, string(cr.Comma))
		hint := ""
		if strings.Contains(head, "\r") {
			hint = " (its lines end in a carriage return alone: save the file with ordinary line ends)"
		}
		if r := []rune(head); len(r) > 80 {
			head = string(r[:80]) + "…"
		}
		return CurveFile{}, fmt.Errorf("%s line %d: header %q must name a time column in seconds (t_s, or elapsed_s as settle export writes) and a temperature column (temp_c or celsius)%s",
			name, cr.HeaderLine, head, hint)
	}
	var out CurveFile
	for {
		rec, line, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return CurveFile{}, fmt.Errorf("%s %w", name, err)
		}
		if len(rec) == 1 && strings.TrimSpace(rec[0]) == "" {
			continue // a blank line
		}
		if msg := malformed(rec, cr.Header, ti); msg != "" {
			out.malformed(line, msg)
			continue
		}
		t, _ := csvdialect.Number(rec[ti])
		if n := len(out.Times); n > 0 && t < out.Times[n-1] {
			return CurveFile{}, fmt.Errorf("%s line %d: %s %g is before the previous row's %g", name, line, cr.Header[ti], t, out.Times[n-1])
		}
		out.Times = append(out.Times, t)
		out.Celsius = append(out.Celsius, cell(rec, ci))
		if ai >= 0 {
			out.Ambient = append(out.Ambient, cell(rec, ai))
		}
	}
	return out, nil
}

// malformed says what is wrong with a row, or "".
func malformed(rec, header []string, ti int) string {
	switch {
	case len(rec) < len(header):
		return fmt.Sprintf("%d cells, the header has %d", len(rec), len(header))
	case len(rec) > len(header):
		return fmt.Sprintf("%d cells, the header has %d (a decimal comma in a comma-separated file? use ';' between fields)", len(rec), len(header))
	}
	if _, ok := csvdialect.Number(rec[ti]); !ok {
		return fmt.Sprintf("%s %q is not a number of seconds", header[ti], truncate(rec[ti], 40))
	}
	return ""
}

// malformed records a row left out.
func (c *CurveFile) malformed(line int, msg string) {
	c.MalformedRows++
	if len(c.Malformed) < MaxMalformed {
		c.Malformed = append(c.Malformed, RowProblem{Line: line, Msg: msg})
	}
}

// truncate shortens s to at most n bytes (on a rune boundary) for a message.
func truncate(s string, n int) string {
	if len(s) <= n {
		return s
	}
	for n > 0 && !utf8.RuneStart(s[n]) {
		n--
	}
	return s[:n] + "…"
}

// cell parses field i of rec as a finite number, NaN when absent or not one.
func cell(rec []string, i int) float64 {
	if i >= len(rec) {
		return math.NaN()
	}
	v, ok := csvdialect.Number(rec[i])
	if !ok {
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
	// The file's malformed rows stay listed: the note is about the file as read.
	out := CurveFile{Times: c.Times[:n], Celsius: c.Celsius[:n], Malformed: c.Malformed, MalformedRows: c.MalformedRows}
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
