package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"strings"
	"testing"
	"time"
)

// runFitSplit runs `settle fit` and returns standard output and standard error apart.
func runFitSplit(t *testing.T, args ...string) (string, string, error) {
	t.Helper()
	root := newRootCmd()
	var out, stderr bytes.Buffer
	root.SetOut(&out)
	root.SetErr(&stderr)
	root.SetArgs(append([]string{"fit"}, args...))
	err := root.Execute()
	return out.String(), stderr.String(), err
}

// A fit slower than the delay shows its progress on standard error only; standard
// output stays one JSON object. The delay is shortened to zero here so that the test
// does not need a file that takes a second (what a user sees after one second).
func TestFitProgressOnStderrOnly(t *testing.T) {
	file := writeCurve(t, 1, 3000, func(s float64) string { return fmt.Sprintf("%.2f", exponential(s)) })
	oldDelay, oldEvery := progressDelay, progressEvery
	progressDelay, progressEvery = 0, time.Millisecond
	t.Cleanup(func() { progressDelay, progressEvery = oldDelay, oldEvery })
	out, stderr, err := runFitSplit(t, file, "--json")
	if err != nil {
		t.Fatal(err)
	}
	var v map[string]any
	if err := json.Unmarshal([]byte(out), &v); err != nil {
		t.Fatalf("standard output is not one JSON object: %v\n%s", err, out)
	}
	if !strings.Contains(stderr, "settle fit: "+file+": ") || !strings.HasSuffix(stderr, " s\n") ||
		!strings.Contains(stderr, "settle fit: "+file+": done in ") {
		t.Errorf("standard error %q: want progress lines and a closing \"done in\"", stderr)
	}
	if strings.Contains(out, "settle fit:") {
		t.Errorf("progress reached standard output: %q", out)
	}
}

// With the real one-second delay, a small file's fit prints nothing on standard error
// (unless the machine is so loaded that it takes a second; then it says so).
func TestFitQuietWhenFast(t *testing.T) {
	file := writeCurve(t, 5, 600, func(s float64) string { return fmt.Sprintf("%.1f", exponential(s)) })
	start := time.Now()
	_, stderr, err := runFitSplit(t, file)
	if err != nil {
		t.Fatal(err)
	}
	if took := time.Since(start); stderr != "" && took < progressDelay {
		t.Errorf("a fit of %v printed %q on standard error", took, stderr)
	}
}

func TestThousands(t *testing.T) {
	for n, want := range map[int]string{0: "0", 999: "999", 1000: "1,000", 4000000: "4,000,000", 123456: "123,456"} {
		if got := thousands(n); got != want {
			t.Errorf("thousands(%d) = %q, want %q", n, got, want)
		}
	}
}
