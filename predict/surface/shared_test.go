package surface

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// sharedReference is shared/reference/reference-values.md, relative to this package
// (the shared folder sits beside the repository root).
var sharedReference = filepath.Join("..", "..", "..", "shared", "reference", "reference-values.md")

// sharedCSVBlock returns the rows (header first) of the first ```csv block after the
// line containing after, itself after the heading; it skips the test when the shared
// file is absent.
func sharedCSVBlock(t *testing.T, heading, after string) [][]string {
	t.Helper()
	data, err := os.ReadFile(sharedReference)
	if os.IsNotExist(err) {
		t.Skipf("shared reference %s absent: cross-check against it skipped", sharedReference)
	}
	if err != nil {
		t.Fatalf("read %s: %v", sharedReference, err)
	}
	text := string(data)
	i := strings.Index(text, heading)
	if i < 0 {
		t.Fatalf("%s: heading %q not found", sharedReference, heading)
	}
	text = text[i:]
	if j := strings.Index(text, after); j >= 0 {
		text = text[j:]
	} else {
		t.Fatalf("%s: %q not found under %q", sharedReference, after, heading)
	}
	start := strings.Index(text, "```csv\n")
	if start < 0 {
		t.Fatalf("%s: no csv block under %q", sharedReference, heading)
	}
	text = text[start+len("```csv\n"):]
	end := strings.Index(text, "```")
	if end < 0 {
		t.Fatalf("%s: unterminated csv block under %q", sharedReference, heading)
	}
	recs, err := csv.NewReader(strings.NewReader(text[:end])).ReadAll()
	if err != nil {
		t.Fatalf("%s: csv block under %q: %v", sharedReference, heading, err)
	}
	return recs
}

// TestNusseltChecksMatchShared checks that testdata/surface/nusselt-checks.csv holds
// exactly the NC1, NC3 and NC4 rows of shared/reference section 3.2, so the copy the
// tests use cannot drift from the published file.
func TestNusseltChecksMatchShared(t *testing.T) {
	recs := sharedCSVBlock(t, "### 3.2", "Numerical check vectors")
	want := map[string]bool{}
	for _, rec := range recs[1:] {
		if _, ok := formulaGeometry[rec[4]]; ok {
			want[strings.Join(rec[1:5], ",")] = true
		}
	}
	for _, rec := range readCheckVectorRecords(t) {
		key := strings.Join(rec[1:5], ",")
		if !want[key] {
			t.Errorf("testdata row %q not in shared section 3.2", key)
		}
		delete(want, key)
	}
	for key := range want {
		t.Errorf("shared section 3.2 row %q missing from testdata", key)
	}
}

// readCheckVectorRecords returns the raw data rows of testdata/surface/nusselt-checks.csv.
func readCheckVectorRecords(t *testing.T) [][]string {
	t.Helper()
	path := filepath.Join("..", "..", "testdata", "surface", "nusselt-checks.csv")
	f, err := os.Open(path)
	if err != nil {
		t.Fatalf("open %s: %v", path, err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comment = '#'
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatalf("read %s: %v", path, err)
	}
	return recs[1:]
}

// TestAirMatchesShared checks Air at every row of shared/reference section 3.1
// (Incropera Table A.4 at 300, 350, 400 K) for every property listed there.
func TestAirMatchesShared(t *testing.T) {
	recs := sharedCSVBlock(t, "### 3.1", "Values as printed")
	if len(recs) < 2 {
		t.Fatalf("section 3.1: no rows")
	}
	for _, rec := range recs[1:] {
		tK, name, want := mustFloat(t, rec[0]), rec[1], mustFloat(t, rec[2])
		p := Air(tK)
		got, ok := map[string]float64{
			"k": p.K, "nu": p.Nu, "Pr": p.Pr, "rho": p.Rho, "cp": p.Cp, "mu": p.Mu, "alpha": p.Alpha,
		}[name]
		if !ok {
			t.Errorf("section 3.1: unknown property %q", name)
			continue
		}
		if relErr(got, want) > 1e-12 {
			t.Errorf("Air(%g).%s = %g, want %g (section 3.1, %s)", tK, name, got, want, rec[5])
		}
	}
}
