package predict

import (
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var updateSpecimens = flag.Bool("update-specimens", false, "rewrite the golden .err files in testdata/config/specimen")

// TestBadSpecimens reads each testdata/config/specimen/NAME.yaml as a specimen file
// and compares the error with NAME.err, exactly (-update-specimens rewrites them).
func TestBadSpecimens(t *testing.T) {
	dir := filepath.Join("..", "testdata", "config", "specimen")
	files, err := filepath.Glob(filepath.Join(dir, "*.yaml"))
	if err != nil || len(files) < 5 {
		t.Fatalf("want at least 5 bad specimens in %s, found %d (%v)", dir, len(files), err)
	}
	t.Chdir(dir)
	for _, file := range files {
		name := filepath.Base(file)
		t.Run(strings.TrimSuffix(name, ".yaml"), func(t *testing.T) {
			s, err := LoadSpecimen(name)
			if err == nil || s != (Specimen{}) {
				t.Fatalf("LoadSpecimen(%s) = %+v, %v; want only an error", name, s, err)
			}
			got := err.Error() + "\n"
			golden := strings.TrimSuffix(name, ".yaml") + ".err"
			if *updateSpecimens {
				if err := os.WriteFile(golden, []byte(got), 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test ./predict -run TestBadSpecimens -update-specimens)", err)
			}
			if got != string(want) {
				t.Errorf("LoadSpecimen(%s) error:\n%s\nwant:\n%s", name, got, want)
			}
		})
	}
}
