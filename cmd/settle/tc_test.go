package main

import (
	"bytes"
	"errors"
	"math"
	"strconv"
	"strings"
	"testing"

	"github.com/settle-lab/settle/daq/thermocouple"
)

// runTC runs `settle tc` with args through the root command, as a user would.
func runTC(t *testing.T, args ...string) (string, error) {
	t.Helper()
	root := newRootCmd()
	var out bytes.Buffer
	root.SetOut(&out)
	root.SetErr(&out)
	root.SetArgs(append([]string{"tc"}, args...))
	err := root.Execute()
	return out.String(), err
}

// lastNumber returns the number just before the final unit in a tc output line.
func lastNumber(t *testing.T, line string) float64 {
	t.Helper()
	f := strings.Fields(line)
	if len(f) < 2 {
		t.Fatalf("output %q too short", line)
	}
	v, err := strconv.ParseFloat(f[len(f)-2], 64)
	if err != nil {
		t.Fatalf("output %q: %v", line, err)
	}
	return v
}

// Known values: NIST 1 °C tables via shared/reference/reference-values.md section 1.5
// (type K: 100 °C -> 4.096 mV, 25 °C -> 1.000 mV; type S: 1000 °C -> 9.587 mV).
func TestTCTemp(t *testing.T) {
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"--type", "K", "--temp", "100"}, "type K: 100 °C -> 4.096 mV (reference junction at 0 °C)\n"},
		{[]string{"--type", "s", "--temp", "1000"}, "type S: 1000 °C -> 9.587 mV (reference junction at 0 °C)\n"},
	} {
		out, err := runTC(t, tc.args...)
		if err != nil || out != tc.want {
			t.Errorf("settle tc %v = %q, %v; want %q", tc.args, out, err, tc.want)
		}
	}
}

// The inverse must give the table temperature within NIST's stated error band for
// type K from 0 to 500 °C (0.05 °C, section 1.4), plus the rounding of up to two table
// values (0.0005 mV each at about 0.042 mV/°C) and the 0.005 °C printing of two decimals.
func TestTCEmf(t *testing.T) {
	const tol = 0.05 + 2*0.0005/0.042 + 0.005
	for _, tc := range []struct {
		args []string
		want float64
		has  string
	}{
		{[]string{"--type", "K", "--emf", "4.096"}, 100, "4.096 mV (reference junction at 0 °C) ->"},
		// 4.096 − 1.000 mV measured with the cold junction at 25 °C (two roundings).
		{[]string{"--type", "K", "--emf", "3.096", "--cj", "25"}, 100, "+ 1.000 mV for the cold junction at 25 °C = 4.096 mV"},
	} {
		out, err := runTC(t, tc.args...)
		if err != nil || !strings.Contains(out, tc.has) || !strings.HasSuffix(out, "°C\n") {
			t.Fatalf("settle tc %v = %q, %v; want a line containing %q", tc.args, out, err, tc.has)
		}
		if got := lastNumber(t, out); math.Abs(got-tc.want) > tol {
			t.Errorf("settle tc %v = %g °C, want %g ± %.3f", tc.args, got, tc.want, tol)
		}
	}
}

func TestTCErrors(t *testing.T) {
	for _, tc := range []struct {
		args  []string
		parts []string
		is    error
	}{
		{[]string{"--type", "K", "--temp", "1500"}, []string{"tc: --temp", "type K", "1500 °C", "-270 to 1372 °C"}, thermocouple.ErrOutOfRange},
		{[]string{"--type", "K", "--emf", "60"}, []string{"tc: --emf: thermocouple type K", "EMF 60 mV", "-6.4577 to 54.8864 mV"}, thermocouple.ErrOutOfRange},
		{[]string{"--type", "K", "--emf", "1", "--cj", "-300"}, []string{"cold junction", "-300 °C", "-270 to 1372 °C"}, thermocouple.ErrOutOfRange},
		{[]string{"--type", "K", "--emf", "54", "--cj", "25"}, []string{"measured 54 mV + cold junction 1.0002 mV", "EMF 55.000242 mV"}, thermocouple.ErrOutOfRange},
		{[]string{"--type", "B", "--emf", "0.1"}, []string{"type B", "no inverse below 250 °C"}, thermocouple.ErrOutOfRange},
		{[]string{"--type", "X", "--temp", "20"}, []string{"--type", `"X"`, "B, E, J, K, N, R, S, T"}, thermocouple.ErrUnknownType},
		{[]string{"--temp", "20"}, []string{"--type is required"}, nil},
		{[]string{"--type", "K"}, []string{"exactly one of --emf MV or --temp C"}, nil},
		{[]string{"--type", "K", "--emf", "1", "--temp", "20"}, []string{"exactly one of"}, nil},
		{[]string{"--type", "K", "--temp", "20", "--cj", "25"}, []string{"--cj applies to --emf only"}, nil},
	} {
		_, err := runTC(t, tc.args...)
		if err == nil {
			t.Errorf("settle tc %v: no error", tc.args)
			continue
		}
		if tc.is != nil && !errors.Is(err, tc.is) {
			t.Errorf("settle tc %v: error %v, want %v", tc.args, err, tc.is)
		}
		for _, p := range tc.parts {
			if !strings.Contains(err.Error(), p) {
				t.Errorf("settle tc %v: error %q lacks %q", tc.args, err, p)
			}
		}
	}
}
