package main

import (
	"os"
	"path/filepath"
	"testing"

	"github.com/settle-lab/settle/daq/thermocouple/internal/refmd"
)

// sharedRef is the reference file relative to this folder (module root is ../../../..).
const sharedRef = "../../../../../shared/reference/reference-values.md"

// TestGeneratedUpToDate regenerates into a temp folder and requires the committed
// coeffs_gen.go and testdata copies to be identical (else run go generate).
func TestGeneratedUpToDate(t *testing.T) {
	if _, err := os.Stat(sharedRef); err != nil {
		t.Skipf("shared reference file %s not found: %v", sharedRef, err)
	}
	dir := t.TempDir()
	out := filepath.Join(dir, "coeffs_gen.go")
	if err := run(sharedRef, out, dir); err != nil {
		t.Fatal(err)
	}
	want := map[string]string{out: "../../coeffs_gen.go"}
	for _, c := range refmd.Copies {
		want[filepath.Join(dir, c.File)] = filepath.Join("../../../../testdata/thermocouple", c.File)
	}
	for gen, committed := range want {
		a, err := os.ReadFile(gen)
		if err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(committed)
		if err != nil {
			t.Fatal(err)
		}
		if string(a) != string(b) {
			t.Errorf("%s is out of date: run go generate ./daq/thermocouple", committed)
		}
	}
}

func TestRunErrors(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "ref.md")
	if err := os.WriteFile(bad, []byte("### 1.2 x\n```csv\ntype,range_idx\nK,1\n```\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := run(bad, filepath.Join(dir, "out.go"), dir); err == nil {
		t.Error("run on a file without section 1.3: no error")
	}
	if err := run(filepath.Join(dir, "missing.md"), filepath.Join(dir, "out.go"), dir); err == nil {
		t.Error("run on a missing file: no error")
	}
}
