package predict

import (
	"encoding/json"
	"fmt"
	"math"
	"strings"
	"time"
)

// TargetSpec is a target as a run's spec gives it and the journal stores it
// (journal.RunSpec.Targets holds a JSON array of them; ParseTargets and TargetsJSON
// convert): exactly one of celsius and within; hold as a Go duration ("90s", "5m").
// It is a target to aim for, not a forecast of one (see the API's forecastjson.TargetForecast).
type TargetSpec struct {
	Name     string   `json:"name"`
	Celsius  *float64 `json:"celsius,omitempty"`
	Within   *float64 `json:"within,omitempty"`
	Hold     string   `json:"hold,omitempty"`
	Handling bool     `json:"handling,omitempty"`
}

// ParseTargets decodes a run's targets. Empty input means no targets. Errors name the
// target by position and name.
func ParseTargets(raw []byte) ([]Target, error) {
	if len(strings.TrimSpace(string(raw))) == 0 {
		return nil, nil
	}
	var in []TargetSpec
	dec := json.NewDecoder(strings.NewReader(string(raw)))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&in); err != nil {
		return nil, fmt.Errorf("run targets: %w", err)
	}
	out := make([]Target, 0, len(in))
	seen := map[string]bool{}
	for i, t := range in {
		tg, err := t.target()
		if err != nil {
			return nil, fmt.Errorf("run targets[%d] (%q): %w", i, t.Name, err)
		}
		if seen[t.Name] {
			return nil, fmt.Errorf("run targets[%d]: duplicate name %q", i, t.Name)
		}
		seen[t.Name] = true
		out = append(out, tg)
	}
	return out, nil
}

func (t TargetSpec) target() (Target, error) {
	tg := Target{Name: t.Name, Celsius: math.NaN(), Handling: t.Handling}
	switch {
	case strings.TrimSpace(t.Name) == "":
		return tg, fmt.Errorf("name is empty")
	case (t.Celsius == nil) == (t.Within == nil):
		return tg, fmt.Errorf("give exactly one of celsius and within")
	case t.Celsius != nil:
		if math.IsNaN(*t.Celsius) || math.IsInf(*t.Celsius, 0) || *t.Celsius < -273.15 {
			return tg, fmt.Errorf("celsius %v is not a temperature", *t.Celsius)
		}
		tg.Celsius = *t.Celsius
	default:
		if !(*t.Within > 0) || math.IsInf(*t.Within, 0) {
			return tg, fmt.Errorf("within %v must be a positive band in °C", *t.Within)
		}
		tg.Within = *t.Within
	}
	if t.Hold != "" {
		d, err := time.ParseDuration(t.Hold)
		if err != nil || d < 0 {
			return tg, fmt.Errorf("hold %q: want a duration such as 90s or 5m", t.Hold)
		}
		tg.Hold = d
	}
	return tg, nil
}

// TargetsJSON encodes targets in the stored form ParseTargets reads.
func TargetsJSON(ts []Target) (json.RawMessage, error) {
	out := make([]TargetSpec, len(ts))
	for i, t := range ts {
		out[i] = TargetSpec{Name: t.Name, Handling: t.Handling}
		if t.IsWithin() {
			out[i].Within = &ts[i].Within
		} else {
			out[i].Celsius = &ts[i].Celsius
		}
		if t.Hold > 0 {
			out[i].Hold = t.Hold.String()
		}
	}
	b, err := json.Marshal(out)
	if err != nil {
		return nil, fmt.Errorf("encode targets: %w", err)
	}
	return b, nil
}
