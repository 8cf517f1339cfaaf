package config

import (
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
)

// TestBadSpecimens reads each testdata/config/specimen/NAME.yaml as a specimen file
// and compares the error with NAME.err, exactly (-update rewrites them).
func TestBadSpecimens(t *testing.T) {
	dir := filepath.Join(testdataDir, "specimen")
	files, err := filepath.Glob(filepath.Join(dir, "*.yaml"))
	if err != nil || len(files) < 5 {
		t.Fatalf("want at least 5 bad specimens in %s, found %d (%v)", dir, len(files), err)
	}
	t.Chdir(dir)
	for _, file := range files {
		name := filepath.Base(file)
		t.Run(strings.TrimSuffix(name, ".yaml"), func(t *testing.T) {
			s, err := LoadSpecimen(name)
			if err == nil || s != nil {
				t.Fatalf("LoadSpecimen(%s) = %+v, %v; want only an error", name, s, err)
			}
			got := err.Error() + "\n"
			golden := strings.TrimSuffix(name, ".yaml") + ".err"
			if *update {
				if err := os.WriteFile(golden, []byte(got), 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test ./config -run TestBadSpecimens -update)", err)
			}
			if got != string(want) {
				t.Errorf("LoadSpecimen(%s) error:\n%s\nwant:\n%s", name, got, want)
			}
		})
	}
}

// A specimen file and the same specimen in a configuration get the same messages,
// the file's key paths without the channel's "channels[0].specimen." (issue 14: "in
// the same words as settle config check"). Without an unknown key: in a
// configuration, an unknown key inside specimen leaves the specimen undecoded
// (mapstructure sets a pointer only on success), so its values go unchecked until
// the key is fixed.
func TestSpecimenFileSameWords(t *testing.T) {
	clearEnv(t)
	spec := "shape: block\nsize_m: -0.02\nlength_m: 0.1\nsensor: middle\nmaterial: {name: concrete, finish: bright, emissivity: 2}\nconvection: chamber\n"
	_, ferr := ParseSpecimen("spec.yaml", []byte(spec))
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
