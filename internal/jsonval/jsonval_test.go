package jsonval

import (
	"encoding/json"
	"math"
	"testing"
	"time"
)

func TestNullsForMissingValues(t *testing.T) {
	loc := time.FixedZone("UTC+2", 2*3600)
	v := struct {
		A, B, C *float64
		T, Z    *time.Time
	}{Num(1.5), Num(math.NaN()), Num(math.Inf(-1)),
		Time(time.Date(2026, 3, 4, 12, 0, 0, 0, loc)), Time(time.Time{})}
	b, err := json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	want := `{"A":1.5,"B":null,"C":null,"T":"2026-03-04T10:00:00Z","Z":null}`
	if string(b) != want {
		t.Errorf("got %s, want %s", b, want)
	}
}
