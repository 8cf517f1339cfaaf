package yamlfile

import (
	"strings"
	"testing"
)

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
		if _, ps := ReadTree(data); len(ps) != 1 || ps[0].Line != 5 {
			b.Fatalf("problems %v, want one at line 5", ps)
		}
	}
}
