package predict

import (
	"math"
	"testing"
)

// FuzzParseTargets: targets arrive over HTTP and from files; any input gives targets
// or an error, never a panic, and accepted targets are well formed and round-trip.
func FuzzParseTargets(f *testing.F) {
	f.Add([]byte(`[{"name":"handle","celsius":45,"handling":true},{"name":"settled","within":2}]`)) // the demo run's targets (report tests)
	f.Add([]byte(`[{"name":"x","celsius":1e308}]`))
	f.Add([]byte(`[{"name":"h","within":0.5,"hold":"90s"}]`))
	f.Add([]byte(`null`))
	f.Fuzz(func(t *testing.T, raw []byte) {
		ts, err := ParseTargets(raw)
		if err != nil {
			return
		}
		for _, tg := range ts {
			if tg.Name == "" || tg.IsWithin() == (tg.Within == 0) || tg.Hold < 0 || math.IsInf(tg.Celsius, 0) {
				t.Fatalf("accepted a malformed target %+v from %q", tg, raw)
			}
		}
		b, err := TargetsJSON(ts)
		if err != nil {
			t.Fatal(err)
		}
		again, err := ParseTargets(b)
		if err != nil || len(again) != len(ts) {
			t.Fatalf("round trip of %q: %v (%d targets, want %d)", b, err, len(again), len(ts))
		}
	})
}
