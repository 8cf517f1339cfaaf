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

// BenchmarkSyntaxLine measures finding the line of a YAML mistake: a 600-line
// configuration with an indentation slip on line 5, where the parser says line 3.
func BenchmarkSyntaxLine(b *testing.B) {
	var sb strings.Builder
	sb.WriteString("listen: 127.0.0.1:8391\nloggers:\n  - name: a\n    port: /dev/x\n   baud: 9600\n")
	for range 100 {
		sb.WriteString("  - name: b\n    port: /dev/y\n    line:\n      separator: \";\"\n      columns: [{index: 1, channel: p}]\n    baud: 9600\n")
	}
	data := []byte(sb.String())
	for b.Loop() {
		if _, ps := readTree(data); len(ps) != 1 || ps[0].Line != 5 {
			b.Fatalf("problems %v, want one at line 5", ps)
		}
	}
}
