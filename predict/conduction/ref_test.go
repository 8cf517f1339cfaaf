package conduction

import (
	"bufio"
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// referencePath is the shared reference-value file, relative to this package
// (module root is two levels up; shared/ sits beside the module root).
var referencePath = filepath.Join("..", "..", "..", "shared", "reference", "reference-values.md")

// referenceCSV returns the rows (as header-keyed maps) of the index-th (from 0)
// ```csv block under the markdown heading that starts with heading, e.g. "### 2.2".
// It skips the test when the reference file is absent.
func referenceCSV(t *testing.T, heading string, index int) []map[string]string {
	t.Helper()
	f, err := os.Open(referencePath)
	if err != nil {
		t.Skipf("reference values not available (%v); they live in shared/reference beside the repo", err)
	}
	defer f.Close()
	var block []string
	inSection, inBlock, seen := false, false, 0
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		switch {
		case strings.HasPrefix(line, "#"):
			if inSection && !inBlock {
				inSection = false
			}
			if strings.HasPrefix(line, heading) {
				inSection = true
			}
		case inSection && strings.TrimSpace(line) == "```csv":
			inBlock = true
		case inBlock && strings.TrimSpace(line) == "```":
			if seen == index {
				return parseCSV(t, block)
			}
			seen++
			inBlock, block = false, nil
		case inBlock:
			block = append(block, line)
		}
	}
	t.Fatalf("%s: no csv block %d under %q", referencePath, index, heading)
	return nil
}

func parseCSV(t *testing.T, lines []string) []map[string]string {
	t.Helper()
	recs, err := csv.NewReader(strings.NewReader(strings.Join(lines, "\n"))).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", referencePath, err)
	}
	if len(recs) < 2 {
		t.Fatalf("%s: csv block has no rows", referencePath)
	}
	rows := make([]map[string]string, 0, len(recs)-1)
	for _, r := range recs[1:] {
		m := make(map[string]string, len(r))
		for i, h := range recs[0] {
			m[h] = r[i]
		}
		rows = append(rows, m)
	}
	return rows
}

// num parses a field of a reference row ("inf" is +Inf).
func num(t *testing.T, row map[string]string, key string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(strings.TrimSpace(row[key]), 64)
	if err != nil {
		t.Fatalf("%s: field %q: %v", referencePath, key, err)
	}
	return v
}

// geometry maps the reference file's geometry names to shapes.
func geometry(t *testing.T, row map[string]string) Shape {
	t.Helper()
	switch row["geometry"] {
	case "plane_wall":
		return Slab
	case "infinite_cylinder":
		return Cylinder
	case "sphere":
		return Sphere
	}
	t.Fatalf("%s: unknown geometry %q", referencePath, row["geometry"])
	return 0
}

func near(got, want, tol float64) bool { return math.Abs(got-want) <= tol }
