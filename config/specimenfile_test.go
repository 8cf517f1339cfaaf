package config

import (
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"

	"github.com/settle-lab/settle/predict"
)

// A specimen file and the same specimen in a configuration get the same messages,
// the file's key paths without the channel's "channels[0].specimen." (issue 14: "in
// the same words as settle config check"). Without an unknown key: in a
// configuration, an unknown key inside specimen leaves the specimen undecoded
// (mapstructure sets a pointer only on success), so its values go unchecked until
// the key is fixed.
func TestSpecimenFileSameWords(t *testing.T) {
	clearEnv(t)
	spec := "shape: block\nsize_m: -0.02\nlength_m: 0.1\nsensor: middle\nmaterial: {name: concrete, finish: bright, emissivity: 2}\nconvection: chamber\n"
	file := filepath.Join(t.TempDir(), "spec.yaml")
	if err := os.WriteFile(file, []byte(spec), 0o644); err != nil {
		t.Fatal(err)
	}
	_, ferr := predict.LoadSpecimen(file)
	indented := "      " + strings.ReplaceAll(strings.TrimSuffix(spec, "\n"), "\n", "\n      ")
	cfg := "loggers:\n  - {name: a, port: /dev/x, line: {columns: [{index: 1, channel: p}]}}\nchannels:\n  - name: p\n    specimen:\n" + indented + "\n"
	_, cerr := Parse("settle.yaml", []byte(cfg))
	if ferr == nil || cerr == nil {
		t.Fatalf("errors %v and %v, want both", ferr, cerr)
	}
	located := regexp.MustCompile(`^[^:]+: (line \d+: )?`)
	words := func(err error, prefix string) []string {
		var out []string
		for _, p := range Problems(err) {
			msg := located.ReplaceAllString(p.Error(), "")
			msg = strings.ReplaceAll(msg, prefix, "")
			out = append(out, msg)
		}
		return out
	}
	// The same set: the order follows the lines, and a key the file leaves out has
	// no line in a specimen file but the line of "specimen:" in a configuration.
	f, c := words(ferr, "\x00"), words(cerr, "channels[0].specimen.")
	slices.Sort(f)
	slices.Sort(c)
	if strings.Join(f, "\n") != strings.Join(c, "\n") || len(f) < 6 {
		t.Errorf("specimen file says:\n%s\nconfig says:\n%s", strings.Join(f, "\n"), strings.Join(c, "\n"))
	}
}
