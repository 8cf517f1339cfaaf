package yamlfile

import (
	"bytes"
	"cmp"
	"fmt"
	"math"
	"os"
	"slices"
	"strings"

	"go.yaml.in/yaml/v3"
)

// Tree is what settle learns from a file's YAML node tree before decoding it: the
// line of every key path, for messages. viper lowercases keys and merges a mapping's
// keys that differ only in case without a word (and a decode that ignores case would
// too), so those are found here, on the raw nodes, and refused.
type Tree struct {
	lines map[string]int // lower-case key path → 1-based line
}

// ReadTree parses data into nodes and returns the key lines, or the problems that
// stop a file before decoding: a syntax error (with the line of the mistake) and
// keys that differ only in case.
func ReadTree(data []byte) (*Tree, []*Problem) {
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		return nil, syntaxProblems(data, err)
	}
	t := &Tree{lines: map[string]int{}}
	var problems []*Problem
	if len(doc.Content) > 0 {
		t.walk(doc.Content[0], "", &problems)
	}
	return t, problems
}

// walk records the line of every key path under n (at path) and adds a problem for
// every key that differs from an earlier key of its mapping only in case. Aliases
// are not followed: their target is walked where it is defined.
func (t *Tree) walk(n *yaml.Node, path string, problems *[]*Problem) {
	switch n.Kind {
	case yaml.MappingNode:
		seen := map[string]*yaml.Node{} // lower-case key → first key node
		for i := 0; i+1 < len(n.Content); i += 2 {
			key, val := n.Content[i], n.Content[i+1]
			child := joinPath(path, key.Value)
			lower := strings.ToLower(key.Value)
			if first, dup := seen[lower]; dup && first.Value != key.Value {
				*problems = append(*problems, &Problem{Line: key.Line, Key: child,
					Msg: fmt.Sprintf("differs only in case from %s at line %d; keys are read without regard to case, so one would silently replace the other: keep one",
						joinPath(path, first.Value), first.Line)})
				continue
			} else if !dup {
				seen[lower] = key
				t.lines[strings.ToLower(child)] = key.Line
			}
			t.walk(val, child, problems)
		}
	case yaml.SequenceNode:
		for i, item := range n.Content {
			child := fmt.Sprintf("%s[%d]", path, i)
			t.lines[strings.ToLower(child)] = item.Line
			t.walk(item, child, problems)
		}
	}
}

func joinPath(parent, key string) string {
	if parent == "" {
		return key
	}
	return parent + "." + key
}

// Locate sets the line of each problem that has none from its key path: the line of
// the key itself or, for a key the file leaves out, of the nearest enclosing key or
// list item that is in the file; and it sorts the problems by line. A nil tree
// locates nothing. env maps the key paths an environment variable can override to
// the variable (nil: none): a problem with such a key names the variable instead of
// a line of the file, when the variable is set.
func (t *Tree) Locate(ps []*Problem, env map[string]string) []*Problem {
	for _, p := range ps {
		path := p.Key
		if path == "" {
			path = p.at
		}
		if v, ok := env[path]; ok && os.Getenv(v) != "" {
			p.Msg += " (from " + v + ")"
			continue
		}
		if t == nil || p.Line > 0 || path == "" {
			continue
		}
		p.Line = t.line(path)
	}
	// In the order of the file, as a reader goes through it; problems without a line
	// (a section the file leaves out) last.
	slices.SortStableFunc(ps, func(a, b *Problem) int { return cmp.Compare(sortLine(a), sortLine(b)) })
	return ps
}

// line returns the line of path or of its nearest ancestor in the file, else 0.
func (t *Tree) line(path string) int {
	path = strings.ToLower(path)
	for path != "" {
		if l, ok := t.lines[path]; ok {
			return l
		}
		cut := max(strings.LastIndexByte(path, '.'), strings.LastIndexByte(path, '['))
		if cut < 0 {
			break
		}
		path = path[:cut]
	}
	return 0
}

// Bounds on the search for the line of a syntax error: the leading parts re-parsed
// and their total size. A re-parse stops at the mistake, so most cost far less than
// their size; a 600-line file with a slip on line 5 takes about 15–20 ms
// (BenchmarkSyntaxLine). The worst case is a mistake the parser only sees at the end
// (an unclosed '[' on line 1): every re-parse reads its whole part, and 16 MB of them
// take about 2.7 s (a 60 KB specimen of 7,500 lines; 33 s with the earlier 256 MB).
const (
	syntaxMaxParses = 2000
	syntaxMaxBytes  = 16 << 20
)

// syntaxProblems turns a YAML syntax error into a problem at the line of the mistake.
//
// go.yaml.in/yaml/v3 (v3.0.4, decode.go, parser.fail) reports the line where the
// enclosing block starts, not the line of the mistake: an indentation slip on line 5
// comes back as "line 2". The mistake's line is found instead as the first line after
// the longest run of leading lines that parses (a file cut after line k is valid YAML
// when lines 1..k are). That run ends where a multi-line value (a quoted string, a
// [flow list]) is cut in two, so the scan goes from the end backwards. Beyond
// syntaxMaxParses or syntaxMaxBytes, the parser's own line is kept, marked "near".
func syntaxProblems(data []byte, err error) []*Problem {
	ps := YAMLProblems(err)
	if len(ps) != 1 || !ps[0].near {
		return ps
	}
	if line, ok := firstBadLine(data); ok {
		ps[0].Line, ps[0].near = line, false
		if m := ps[0].Msg; strings.Contains(m, "expected key") || strings.Contains(m, "'-' indicator") || strings.Contains(m, "mapping values are not allowed") {
			ps[0].Msg += " (is this line indented like the keys it belongs with?)"
		}
	}
	return ps
}

// firstBadLine returns 1 + the number of leading lines of data that parse when the
// rest is cut off, scanning from the longest such prefix down; false when the budget
// runs out first.
func firstBadLine(data []byte) (int, bool) {
	ends := lineEnds(data)
	spent := 0
	for k := len(ends) - 1; k >= 0; k-- {
		prefix := data[:ends[k]]
		if spent += len(prefix); spent > syntaxMaxBytes || len(ends)-k > syntaxMaxParses {
			return 0, false
		}
		var n yaml.Node
		if yaml.Unmarshal(prefix, &n) == nil {
			return k + 1, true
		}
	}
	return 1, true
}

// lineEnds returns, for k = 0..lines-1, the length of the first k lines of data.
func lineEnds(data []byte) []int {
	ends := []int{0}
	for i := 0; i < len(data); {
		j := bytes.IndexByte(data[i:], '\n')
		if j < 0 {
			break
		}
		i += j + 1
		ends = append(ends, i)
	}
	if ends[len(ends)-1] == len(data) {
		ends = ends[:len(ends)-1] // the last line ends the file: it is line len(ends)
	}
	return ends
}

func sortLine(p *Problem) int {
	if p.Line == 0 {
		return math.MaxInt
	}
	return p.Line
}
