package thermocouple

import (
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/settle-lab/settle/daq/thermocouple/internal/refmd"
)

// The published values come from shared/reference/reference-values.md section 1
// (NIST Monograph 175 / NIST SRD 60, sources S1–S4 there). The tests read the copies in
// testdata/thermocouple, and compare those copies with the shared file when it exists.
const (
	sharedRef   = "../../../shared/reference/reference-values.md"
	testdataDir = "../../testdata/thermocouple"
)

// row is one CSV row keyed by header.
type row map[string]string

// num parses a numeric field or fails the test.
func (r row) num(t testing.TB, key string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(r[key], 64)
	if err != nil {
		t.Fatalf("column %s: %v (row %v)", key, err, r)
	}
	return v
}

// typ parses the type column or fails the test.
func (r row) typ(t testing.TB) Type {
	t.Helper()
	ty, err := ParseType(r["type"])
	if err != nil {
		t.Fatal(err)
	}
	return ty
}

// loadBlock reads one testdata copy as a refmd.Block.
func loadBlock(t testing.TB, file string) refmd.Block {
	t.Helper()
	for _, c := range refmd.Copies {
		if c.File != file {
			continue
		}
		text, err := os.ReadFile(filepath.Join(testdataDir, file))
		if err != nil {
			t.Fatal(err)
		}
		b, err := refmd.FromCSV(c.Section, string(text))
		if err != nil {
			t.Fatalf("%s: %v", file, err)
		}
		return b
	}
	t.Fatalf("no testdata copy named %s", file)
	return refmd.Block{}
}

// rows returns the rows of a block keyed by its header.
func rows(b refmd.Block) []row {
	out := make([]row, len(b.Rows))
	for i, r := range b.Rows {
		out[i] = row{}
		for j, h := range b.Header {
			out[i][h] = r[j]
		}
	}
	return out
}

// loadRows reads one testdata copy as rows.
func loadRows(t testing.TB, file string) []row { return rows(loadBlock(t, file)) }

// sharedBlocks parses the shared reference file, or skips the test when it is absent.
func sharedBlocks(t *testing.T) []refmd.Block {
	t.Helper()
	if _, err := os.Stat(sharedRef); err != nil {
		t.Skipf("shared reference file %s not found (run from the repo with shared/ beside it): %v", sharedRef, err)
	}
	blocks, err := refmd.ReadFile(sharedRef)
	if err != nil {
		t.Fatal(err)
	}
	return blocks
}

// TestTestdataMatchesShared proves the testdata copies are the shared file's tables,
// byte for byte (rerun `go generate ./daq/thermocouple` if this fails).
func TestTestdataMatchesShared(t *testing.T) {
	blocks := sharedBlocks(t)
	for _, c := range refmd.Copies {
		b := refmd.Find(blocks, c.Section)
		if len(b) <= c.Index {
			t.Fatalf("%s: section %s has no table %d", sharedRef, c.Section, c.Index+1)
		}
		got, err := os.ReadFile(filepath.Join(testdataDir, c.File))
		if err != nil {
			t.Fatal(err)
		}
		if string(got) != b[c.Index].Text {
			t.Errorf("%s differs from %s section %s table %d", c.File, sharedRef, c.Section, c.Index+1)
		}
	}
}

// TestCoefficientsMatchShared compares the Go tables with the shared reference file
// (sections 1.2 and 1.3, NIST Monograph 175 / SRD 60 via S1–S4) digit for digit.
func TestCoefficientsMatchShared(t *testing.T) {
	blocks := sharedBlocks(t)
	checkForward(t, refmd.Find(blocks, "1.2")[0])
	checkInverse(t, refmd.Find(blocks, "1.3")[0])
}

// TestCoefficientsMatchTestdata does the same against the testdata copies, so that it
// runs without shared/.
func TestCoefficientsMatchTestdata(t *testing.T) {
	checkForward(t, loadBlock(t, "forward-coefficients.csv"))
	checkInverse(t, loadBlock(t, "inverse-coefficients.csv"))
}

// checkForward requires every coefficient and limit of the table to equal the Go value
// parsed from the same decimal string, and the Go table to hold nothing more.
func checkForward(t *testing.T, b refmd.Block) {
	t.Helper()
	counts := map[Type]map[int]int{}
	for _, r := range rows(b) {
		ty, idx := r.typ(t), int(r.num(t, "range_idx"))-1
		rs := forwardTable[ty]
		if idx < 0 || idx >= len(rs) {
			t.Fatalf("type %v: no forward range %d in Go table", ty, idx+1)
		}
		g, want := rs[idx], r.num(t, "coefficient")
		if g.lo != r.num(t, "t_lo_C") || g.hi != r.num(t, "t_hi_C") {
			t.Errorf("type %v range %d: limits %g..%g, reference %s..%s", ty, idx+1, g.lo, g.hi, r["t_lo_C"], r["t_hi_C"])
		}
		var got float64
		switch r["term"] {
		case "c":
			i := int(r.num(t, "i"))
			if i >= len(g.c) {
				t.Fatalf("type %v range %d: no c%d in Go table", ty, idx+1, i)
			}
			got = g.c[i]
			if counts[ty] == nil {
				counts[ty] = map[int]int{}
			}
			counts[ty][idx]++
		case "a0", "a1", "a2":
			if g.exp == nil {
				t.Fatalf("type %v range %d: Go table lacks the exponential term", ty, idx+1)
			}
			got = map[string]float64{"a0": g.exp.a0, "a1": g.exp.a1, "a2": g.exp.a2}[r["term"]]
		default:
			t.Fatalf("unexpected term %q", r["term"])
		}
		if got != want {
			t.Errorf("type %v range %d %s%s: Go %v, reference %s", ty, idx+1, r["term"], r["i"], got, r["coefficient"])
		}
	}
	for ty, rs := range forwardTable {
		for i, g := range rs {
			if counts[ty][i] != len(g.c) {
				t.Errorf("type %v forward range %d: Go has %d coefficients, reference %d", ty, i+1, len(g.c), counts[ty][i])
			}
		}
	}
}

// checkInverse is checkForward for the inverse table, including its stated limits.
func checkInverse(t *testing.T, b refmd.Block) {
	t.Helper()
	counts := map[Type]map[int]int{}
	for _, r := range rows(b) {
		ty, idx := r.typ(t), int(r.num(t, "range_idx"))-1
		rs := inverseTable[ty]
		if idx < 0 || idx >= len(rs) {
			t.Fatalf("type %v: no inverse range %d in Go table", ty, idx+1)
		}
		g, i := rs[idx], int(r.num(t, "i"))
		lim := [4]float64{g.tLo, g.tHi, g.eLo, g.eHi}
		for k, col := range []string{"t_lo_C", "t_hi_C", "E_lo_mV", "E_hi_mV"} {
			if lim[k] != r.num(t, col) {
				t.Errorf("type %v inverse range %d %s: Go %v, reference %s", ty, idx+1, col, lim[k], r[col])
			}
		}
		if r["term"] != "d" || i >= len(g.d) {
			t.Fatalf("type %v inverse range %d: no %s%d in Go table", ty, idx+1, r["term"], i)
		}
		if g.d[i] != r.num(t, "coefficient") {
			t.Errorf("type %v inverse range %d d%d: Go %v, reference %s", ty, idx+1, i, g.d[i], r["coefficient"])
		}
		if counts[ty] == nil {
			counts[ty] = map[int]int{}
		}
		counts[ty][idx]++
	}
	for ty, rs := range inverseTable {
		for i, g := range rs {
			if counts[ty][i] != len(g.d) {
				t.Errorf("type %v inverse range %d: Go has %d coefficients, reference %d", ty, i+1, len(g.d), counts[ty][i])
			}
		}
	}
}
