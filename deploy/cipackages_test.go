package deploy

import (
	"bufio"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"
)

// The check below keeps .ci/packages.txt in step with the tests: every outside program
// a test runs and every Python module a test script imports must come from a Debian
// package that the list names (or from an Essential package, which every Debian machine
// has). A package that is only a Recommends of a listed one does not count: .ci/run
// installs with --no-install-recommends, so a machine where it happened to be installed
// would hide the gap.

const (
	repoRoot     = ".."
	packagesFile = "../.ci/packages.txt"
	systemPython = "/usr/bin/python3"
)

// notFromDebian are programs the tests use that do not come from a Debian package: the
// Go toolchain is installed from the Go distribution on every build machine.
var notFromDebian = map[string]bool{"go": true}

var (
	// requireTool(t, "promtool", "prometheus"): a program CI must have.
	requireToolCall = regexp.MustCompile(`requireTool\(t, "([^"]+)"`)
	// exec.LookPath("chromium"): a program a test looks up.
	lookPathCall = regexp.MustCompile(`exec\.LookPath\("([^"]+)"\)`)
	// A Python interpreter named by path or by name in a test.
	pythonLiteral = regexp.MustCompile(`"(/usr/bin/python3|python3)"`)
	// "import pymodbus, serial_asyncio" inside a Go string: python -c checks.
	inlineImport = regexp.MustCompile(`"import ([A-Za-z0-9_., ]+)"`)
	// import x / from x.y import z, at the start of a line of a .py file.
	pyImport = regexp.MustCompile(`^\s*(?:import|from)\s+([A-Za-z0-9_.]+)`)
)

// testNeeds is what the tests of this repository need from the machine.
type testNeeds struct {
	programs map[string]string // program → first file that needs it
	modules  map[string]string // top-level Python module → first file that imports it
}

// scanTestNeeds reads every *_test.go and every testdata *.py under root.
func scanTestNeeds(t *testing.T, root string) testNeeds {
	t.Helper()
	needs := testNeeds{programs: map[string]string{}, modules: map[string]string{}}
	add := func(m map[string]string, name, file string) {
		if _, ok := m[name]; !ok {
			m[name] = file
		}
	}
	err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() && (d.Name() == ".git" || d.Name() == "node_modules") {
			return filepath.SkipDir
		}
		switch {
		case strings.HasSuffix(path, "_test.go") && !strings.HasSuffix(path, "cipackages_test.go"):
			src := readFile(t, path)
			for _, re := range []*regexp.Regexp{requireToolCall, lookPathCall, pythonLiteral} {
				for _, m := range re.FindAllStringSubmatch(src, -1) {
					add(needs.programs, m[1], path)
				}
			}
			for _, m := range inlineImport.FindAllStringSubmatch(src, -1) {
				for _, mod := range strings.Split(m[1], ",") {
					add(needs.modules, topModule(mod), path)
				}
			}
		case strings.HasSuffix(path, ".py"):
			for _, line := range strings.Split(readFile(t, path), "\n") {
				if m := pyImport.FindStringSubmatch(line); m != nil {
					add(needs.modules, topModule(m[1]), path)
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatalf("scan %s: %v", root, err)
	}
	return needs
}

func topModule(name string) string {
	return strings.SplitN(strings.TrimSpace(name), ".", 2)[0]
}

// listedPackages reads .ci/packages.txt: one name a line, '#' starts a comment.
func listedPackages(t *testing.T) map[string]bool {
	t.Helper()
	f, err := os.Open(packagesFile)
	if err != nil {
		t.Fatalf("open %s: %v", packagesFile, err)
	}
	defer f.Close()
	out := map[string]bool{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line, _, _ := strings.Cut(sc.Text(), "#")
		for _, name := range strings.Fields(line) {
			out[name] = true
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatalf("read %s: %v", packagesFile, err)
	}
	return out
}

// dpkgOwner names the Debian package that installed path, trying the /bin ↔ /usr/bin
// twin on a merged-/usr machine, where dpkg may know a file under either name.
func dpkgOwner(path string) (string, error) {
	candidates := []string{path}
	if real, err := filepath.EvalSymlinks(path); err == nil && real != path {
		candidates = append(candidates, real)
	}
	for _, p := range append([]string{}, candidates...) {
		switch {
		case strings.HasPrefix(p, "/usr/bin/"), strings.HasPrefix(p, "/usr/sbin/"), strings.HasPrefix(p, "/usr/lib/"):
			candidates = append(candidates, strings.TrimPrefix(p, "/usr"))
		case strings.HasPrefix(p, "/bin/"), strings.HasPrefix(p, "/sbin/"), strings.HasPrefix(p, "/lib/"):
			candidates = append(candidates, "/usr"+p)
		}
	}
	for _, p := range candidates {
		out, err := exec.Command("dpkg", "-S", p).Output()
		if err != nil {
			continue
		}
		// "python3-scipy: /usr/lib/python3/dist-packages/scipy/__init__.py"
		pkg, _, _ := strings.Cut(strings.SplitN(string(out), "\n", 2)[0], ": ")
		pkg, _, _ = strings.Cut(pkg, ":") // drop an architecture qualifier
		if strings.Contains(pkg, ",") {   // "diversion by ..." or a shared directory
			continue
		}
		return pkg, nil
	}
	return "", fmt.Errorf("no Debian package owns %s", path)
}

func essential(pkg string) bool {
	out, err := exec.Command("dpkg-query", "-W", "-f=${Essential}", pkg).Output()
	return err == nil && strings.TrimSpace(string(out)) == "yes"
}

// stdlibModules is the Python standard library's module list, which needs no package
// beyond the interpreter itself.
func stdlibModules(t *testing.T) map[string]bool {
	t.Helper()
	out, err := exec.Command(systemPython, "-c", `import sys; print("\n".join(sys.stdlib_module_names))`).Output()
	if err != nil {
		t.Fatalf("%s: list the standard library: %v", systemPython, err)
	}
	m := map[string]bool{}
	for _, name := range strings.Fields(string(out)) {
		m[name] = true
	}
	return m
}

// moduleFile returns the file Debian's python3 imports module from.
func moduleFile(module string) (string, error) {
	const prog = `import importlib.util, sys
s = importlib.util.find_spec(sys.argv[1])
if s is None: sys.exit("not installed")
print(s.origin if s.origin and s.origin != "namespace" else list(s.submodule_search_locations)[0])`
	out, err := exec.Command(systemPython, "-c", prog, module).CombinedOutput()
	if err != nil {
		return "", fmt.Errorf("%s cannot import %s: %s", systemPython, module, strings.TrimSpace(string(out)))
	}
	return strings.TrimSpace(string(out)), nil
}

// requireDpkg skips where the machine has no dpkg (not Debian), except under CI=true.
func requireDpkg(t *testing.T) {
	t.Helper()
	if _, err := exec.LookPath("dpkg"); err == nil {
		if _, err := os.Stat(systemPython); err == nil || os.Getenv("CI") == "true" {
			return
		}
		t.Skipf("%s absent: the package check needs Debian's python3", systemPython)
	}
	if os.Getenv("CI") == "true" {
		t.Fatal("dpkg not found but CI=true: CI runs on Debian")
	}
	t.Skip("dpkg not found: the package check runs on Debian machines only")
}

// TestCIPackagesCoverTestNeeds fails when a test needs a program or a Python module
// that no package in .ci/packages.txt provides, naming the file that needs it and the
// package to add. Where a need is simply not installed here it skips locally (fails
// under CI=true, where .ci/run has installed the list).
func TestCIPackagesCoverTestNeeds(t *testing.T) {
	requireDpkg(t)
	listed := listedPackages(t)
	needs := scanTestNeeds(t, repoRoot)
	if len(needs.programs) == 0 || len(needs.modules) == 0 {
		t.Fatalf("found %d programs and %d Python modules in the tests: the scan is broken",
			len(needs.programs), len(needs.modules))
	}
	var missing, unlisted []string
	check := func(kind, name, file, path string, err error) {
		if err == nil {
			var pkg string
			if pkg, err = dpkgOwner(path); err == nil {
				if !listed[pkg] && !essential(pkg) {
					unlisted = append(unlisted, fmt.Sprintf("%s %s (needed by %s) comes from Debian package %s: add it to .ci/packages.txt",
						kind, name, file, pkg))
				}
				t.Logf("%s %-16s ← %s", kind, name, pkg)
				return
			}
		}
		missing = append(missing, fmt.Sprintf("%s %s (needed by %s): %v", kind, name, file, err))
	}
	for _, name := range sortedKeys(needs.programs) {
		if notFromDebian[name] {
			continue
		}
		path, err := exec.LookPath(name)
		check("program", name, needs.programs[name], path, err)
	}
	std := stdlibModules(t)
	for _, name := range sortedKeys(needs.modules) {
		if std[name] {
			continue
		}
		path, err := moduleFile(name)
		check("python module", name, needs.modules[name], path, err)
	}
	for _, u := range unlisted {
		t.Error(u)
	}
	if len(missing) > 0 {
		msg := "not installed here, so their packages cannot be checked:\n  " + strings.Join(missing, "\n  ")
		if os.Getenv("CI") == "true" {
			t.Fatal(msg)
		}
		t.Skip(msg)
	}
}

// TestScanFindsKnownNeeds guards the scanner itself with needs the tests are known to
// have today, so a regexp that silently stops matching cannot pass the check above.
func TestScanFindsKnownNeeds(t *testing.T) {
	needs := scanTestNeeds(t, repoRoot)
	for _, p := range []string{"promtool", "prometheus", "chromium", systemPython} {
		if _, ok := needs.programs[p]; !ok {
			t.Errorf("scan did not find program %s; found %v", p, sortedKeys(needs.programs))
		}
	}
	for _, m := range []string{"pymodbus", "serial_asyncio", "scipy", "numpy"} {
		if _, ok := needs.modules[m]; !ok {
			t.Errorf("scan did not find Python module %s; found %v", m, sortedKeys(needs.modules))
		}
	}
}

func sortedKeys(m map[string]string) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}
