package config

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzParse feeds any bytes to Parse: it must never panic, a success must be a
// configuration that validates, and every problem must name the file. The seed
// corpus is every config under the repository's testdata/config and the example.
func FuzzParse(f *testing.F) {
	seeds, _ := filepath.Glob(filepath.Join(testdataDir, "*", "*.yaml"))
	for _, s := range seeds {
		data, err := os.ReadFile(s)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
	}
	f.Add([]byte(Example))
	f.Fuzz(func(t *testing.T, data []byte) {
		c, err := Parse("fuzz.yaml", data)
		if err == nil {
			if verr := c.Validate(); verr != nil {
				t.Fatalf("Parse accepted a config that fails Validate: %v", verr)
			}
			return
		}
		if c != nil {
			t.Fatal("Parse returned a config with an error")
		}
		for _, p := range Problems(err) {
			if !strings.HasPrefix(p.Error(), "fuzz.yaml: ") {
				t.Fatalf("problem does not name the file: %q", p.Error())
			}
		}
	})
}

// BenchmarkParse measures parsing and validating the example configuration; the
// daemon does this at start and on every SIGHUP.
func BenchmarkParse(b *testing.B) {
	data := []byte(Example)
	for b.Loop() {
		if _, err := Parse("example.yaml", data); err != nil {
			b.Fatal(err)
		}
	}
}
