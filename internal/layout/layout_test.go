package layout

import (
	"go/build"
	"io/fs"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

const module = "github.com/settle-lab/settle/"

// forbidden lists, for each room (a package path and everything below it), the rooms
// its non-test code must not import: the data flow runs daq → predict → (runs,
// report, notify) → exporter, and config and cmd compose them.
var forbidden = map[string][]string{
	"daq":      {"config", "predict", "runs", "report", "notify", "exporter", "cmd"},
	"predict":  {"config", "daq", "runs", "report", "notify", "exporter", "cmd"},
	"config":   {"runs", "report", "exporter", "cmd"},
	"notify":   {"config", "runs", "report", "exporter", "cmd"},
	"report":   {"config", "runs", "exporter", "cmd"},
	"runs":     {"config", "exporter", "cmd"},
	"internal": {"config", "runs", "report", "notify", "exporter", "cmd"},
}

// within reports whether pkg (a path below the module) is room or below it.
func within(pkg, room string) bool { return pkg == room || strings.HasPrefix(pkg, room+"/") }

// imports returns every package of the module below root with its non-test imports
// of the module's own packages, paths relative to the module.
func imports(t *testing.T, root string) map[string][]string {
	t.Helper()
	out := map[string][]string{}
	err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil || !d.IsDir() {
			return err
		}
		if name := d.Name(); path != root && (name == "testdata" || strings.HasPrefix(name, ".")) {
			return filepath.SkipDir
		}
		p, err := build.ImportDir(path, 0)
		if err != nil {
			return nil // no Go files here
		}
		rel, _ := filepath.Rel(root, path)
		for _, imp := range p.Imports {
			if own, ok := strings.CutPrefix(imp, module); ok {
				out[filepath.ToSlash(rel)] = append(out[filepath.ToSlash(rel)], own)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// TestCorridors: no room imports against the data flow, and only cmd/settle imports
// the exporter (the daemon's outside face is composed in one place).
func TestCorridors(t *testing.T) {
	all := imports(t, "../..")
	if len(all) < 10 {
		t.Fatalf("found %d packages with imports of the module; the walk is broken", len(all))
	}
	for pkg, imps := range all {
		for room, banned := range forbidden {
			if !within(pkg, room) {
				continue
			}
			for _, imp := range imps {
				if i := slices.IndexFunc(banned, func(b string) bool { return within(imp, b) }); i >= 0 {
					t.Errorf("%s imports %s: %s must not import %s", pkg, imp, room, banned[i])
				}
			}
		}
		if pkg != "cmd/settle" && slices.Contains(imps, "exporter") {
			t.Errorf("%s imports exporter: only cmd/settle may", pkg)
		}
	}
}

// TestCorridorsCatch: the rule finds a backward import (a made-up one).
func TestCorridorsCatch(t *testing.T) {
	if !within("daq/clean", "daq") || within("daqx", "daq") || !within("config", "config") {
		t.Fatal("within misreads rooms")
	}
	banned := forbidden["predict"]
	if !slices.ContainsFunc(banned, func(b string) bool { return within("config", b) }) {
		t.Error("predict may import config")
	}
}
