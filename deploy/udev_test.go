package deploy

import (
	"fmt"
	"strings"
	"testing"
)

const udevPath = "udev/99-settle-logger.rules"

// udevRule is one rule line: match keys (==) and assignments (=, +=), by key. An
// assignment key keeps its operator's "+" (e.g. "SYMLINK+").
type udevRule struct {
	line   int
	match  map[string]string
	assign map[string]string
}

// udevRules parses the rule lines of our own rules file. It understands the subset the
// file uses: comma-separated KEY=="v", KEY="v" and KEY+="v", one rule per line.
func udevRules(t *testing.T, path string) []udevRule {
	t.Helper()
	var rules []udevRule
	n := 0
	for line := range strings.Lines(readFile(t, path)) {
		n++
		line = strings.TrimSpace(line)
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		r := udevRule{line: n, match: map[string]string{}, assign: map[string]string{}}
		for _, field := range strings.Split(line, ",") {
			field = strings.TrimSpace(field)
			if key, val, ok := strings.Cut(field, "=="); ok {
				r.match[key] = unquote(t, path, n, val)
				continue
			}
			key, val, ok := strings.Cut(field, "=")
			if !ok {
				t.Fatalf("%s:%d: %q is neither KEY==\"v\" nor KEY=\"v\"", path, n, field)
			}
			r.assign[key] = unquote(t, path, n, val)
		}
		rules = append(rules, r)
	}
	return rules
}

func unquote(t *testing.T, path string, line int, v string) string {
	t.Helper()
	if len(v) < 2 || v[0] != '"' || v[len(v)-1] != '"' {
		t.Fatalf("%s:%d: value %s is not in double quotes", path, line, v)
	}
	return v[1 : len(v)-1]
}

// TestUdevRules checks every rule names a tty, gives it a unique /dev/settle/ link and
// the group and mode the systemd unit's SupplementaryGroups=dialout relies on, and picks
// the device by USB identity or by port.
func TestUdevRules(t *testing.T) {
	rules := udevRules(t, udevPath)
	if len(rules) < 2 {
		t.Fatalf("%s: %d rules, want at least 2", udevPath, len(rules))
	}
	seen := map[string]int{}
	for _, r := range rules {
		where := fmt.Sprintf("%s:%d", udevPath, r.line)
		if r.match["SUBSYSTEM"] != "tty" {
			t.Errorf("%s: SUBSYSTEM==%q, want tty", where, r.match["SUBSYSTEM"])
		}
		if r.assign["GROUP"] != "dialout" || r.assign["MODE"] != "0660" {
			t.Errorf("%s: GROUP=%q MODE=%q, want dialout and 0660", where, r.assign["GROUP"], r.assign["MODE"])
		}
		link := r.assign["SYMLINK+"]
		if !strings.HasPrefix(link, "settle/") || len(link) == len("settle/") {
			t.Errorf("%s: SYMLINK+=%q, want settle/<name>", where, link)
		}
		if prev, dup := seen[link]; dup {
			t.Errorf("%s: SYMLINK+=%q already made on line %d", where, link, prev)
		}
		seen[link] = r.line
		byID := r.match["ATTRS{idVendor}"] != "" && r.match["ATTRS{idProduct}"] != "" && r.match["ATTRS{serial}"] != ""
		if !byID && r.match["KERNELS"] == "" {
			t.Errorf("%s: matches neither idVendor+idProduct+serial nor KERNELS (a USB port)", where)
		}
	}
}
