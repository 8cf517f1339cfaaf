package yamlfile

import (
	"errors"
	"fmt"
	"strings"
)

// Problem is one thing wrong with a file: a YAML syntax error, an unknown key, a
// value of the wrong type or a value that fails validation. Readers return their
// problems joined with errors.Join (Join); Problems takes them apart.
type Problem struct {
	// File is the file name as the reader was given it; empty from validation alone.
	File string
	// Line is the 1-based line in File, when known: the line of the key (or, for a
	// key the file leaves out, of the enclosing key or list item), or of a YAML
	// mistake; else 0.
	Line int
	// Key is the key path, such as "loggers[0].line.columns[2].index"; empty when the
	// problem concerns the whole file or the message names the key itself.
	Key string
	// Msg says what is wrong and, where it helps, what is wanted.
	Msg string

	// Warning marks a problem that does not stop settle from starting, such as a
	// serial port that is not plugged in yet; Error shows "warning: ".
	Warning bool

	near bool   // Line is where the YAML parser noticed, not where the mistake is
	at   string // the key path named in Msg, for its line (unknown keys)
}

// Error formats the problem as "FILE: line N: KEY: MSG", leaving out the parts that
// are empty, with "warning: " before KEY for a warning; "near line N" where the line
// of a YAML syntax error could not be found exactly.
func (p *Problem) Error() string {
	var b strings.Builder
	if p.File != "" {
		b.WriteString(p.File + ": ")
	}
	if p.near {
		b.WriteString("near ")
	}
	if p.Line > 0 {
		fmt.Fprintf(&b, "line %d: ", p.Line)
	}
	if p.Warning {
		b.WriteString("warning: ")
	}
	if p.Key != "" {
		b.WriteString(p.Key + ": ")
	}
	b.WriteString(p.Msg)
	return b.String()
}

// Problems lists the problems inside err, in order: err itself when it is a single
// *Problem, or the *Problem values of an errors.Join tree. Errors that are not
// problems (for example a file that cannot be read) are returned as a Problem with
// only Msg set, so that a caller can print every entry the same way.
func Problems(err error) []*Problem {
	if err == nil {
		return nil
	}
	if joined, ok := err.(interface{ Unwrap() []error }); ok {
		var out []*Problem
		for _, e := range joined.Unwrap() {
			out = append(out, Problems(e)...)
		}
		return out
	}
	var p *Problem
	if errors.As(err, &p) {
		return []*Problem{p}
	}
	return []*Problem{{Msg: err.Error()}}
}

// Join returns the problems as one error, or nil when there are none.
func Join(ps []*Problem) error {
	if len(ps) == 0 {
		return nil
	}
	errs := make([]error, len(ps))
	for i, p := range ps {
		errs[i] = p
	}
	return errors.Join(errs...)
}

// InFile sets File on every problem and returns them joined.
func InFile(name string, ps []*Problem) error {
	for _, p := range ps {
		p.File = name
	}
	return Join(ps)
}
