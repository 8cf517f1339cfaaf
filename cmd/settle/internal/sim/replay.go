package sim

import (
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"github.com/settle-lab/settle/config"
	"github.com/settle-lab/settle/internal/csvdialect"
)

// Replay channel names used by (*Replay).DemoConfig.
const (
	ReplayChannel        = "replay"
	ReplayAmbientChannel = "replay-ambient"
)

// replayColumns are the CSV header names a replay file must have, in any order.
var replayColumns = [3]string{"t_s", "temp_c", "ambient_c"}

// Replay streams a recorded curve from CSV with a header naming the columns t_s (logger
// clock, seconds), temp_c and ambient_c (°C; an empty cell is a missing reading). It
// implements Lines.
type Replay struct {
	name   string
	r      *csvdialect.Reader
	col    [3]int // field index of t_s, temp_c, ambient_c
	closer io.Closer
}

// OpenReplay opens a replay CSV file; Close it when done.
func OpenReplay(path string) (*Replay, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("open replay: %w", err)
	}
	r, err := NewReplay(f, path)
	if err != nil {
		f.Close()
		return nil, err
	}
	r.closer = f
	return r, nil
}

// NewReplay reads the header of a replay CSV from r; name is used in errors. The file
// may be any member of settle's CSV family (internal/csvdialect: ',' or ';', decimal
// points or commas).
func NewReplay(r io.Reader, name string) (*Replay, error) {
	cr, err := csvdialect.NewReader(r)
	if err != nil {
		return nil, fmt.Errorf("replay %s: %w", name, err)
	}
	rp := &Replay{name: name, r: cr}
	for i, want := range replayColumns {
		if rp.col[i] = cr.Column(want); rp.col[i] < 0 {
			return nil, fmt.Errorf("replay %s: header %q: no column %q (want %s)", name, strings.Join(cr.Header, string(cr.Comma)), want, strings.Join(replayColumns[:], ","))
		}
	}
	return rp, nil
}

// Columns returns the replay's channel names: the specimen, then ambient.
func (r *Replay) Columns() []string { return []string{ReplayChannel, ReplayAmbientChannel} }

// Next returns the next row, or io.EOF after the last one. A row without a readable
// t_s or with a non-numeric temperature is an error naming the file and line.
func (r *Replay) Next() (Sample, error) {
	rec, line, err := r.r.Read()
	if errors.Is(err, io.EOF) {
		return Sample{}, io.EOF
	}
	if err != nil {
		return Sample{}, fmt.Errorf("replay %s: %w", r.name, err)
	}
	for _, c := range r.col {
		if c >= len(rec) {
			return Sample{}, fmt.Errorf("replay %s:%d: %d cells, the header has %d", r.name, line, len(rec), len(r.r.Header))
		}
	}
	clock, ok := csvdialect.Number(rec[r.col[0]])
	if !ok {
		return Sample{}, fmt.Errorf("replay %s:%d: t_s %q is not a number of seconds", r.name, line, rec[r.col[0]])
	}
	smp := Sample{Clock: clock, Values: make([]float64, 2)}
	for i, c := range r.col[1:] {
		if smp.Values[i], err = cell(rec[c]); err != nil {
			return Sample{}, fmt.Errorf("replay %s:%d: %s: %w", r.name, line, replayColumns[i+1], err)
		}
	}
	return smp, nil
}

// cell reads a temperature cell; an empty cell is a missing reading (NaN).
func cell(s string) (float64, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return math.NaN(), nil
	}
	v, ok := csvdialect.Number(s)
	if !ok {
		return 0, fmt.Errorf("%q is not a temperature", s)
	}
	return v, nil
}

// Close closes the file opened by OpenReplay (a no-op for NewReplay).
func (r *Replay) Close() error {
	if r.closer == nil {
		return nil
	}
	return r.closer.Close()
}

// DemoConfig returns a configuration for reading this replay on port: logger DemoLogger,
// channel ReplayChannel with ambient ReplayAmbientChannel and the demo's targets.
func (r *Replay) DemoConfig(port string) config.Config {
	return lineConfig(DemoLogger, port, []string{ReplayChannel}, ReplayAmbientChannel)
}
