package yamlfile

import (
	"errors"
	"fmt"
	"math"
	"reflect"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/go-viper/mapstructure/v2"
)

var durationType = reflect.TypeFor[time.Duration]()

// CheckValue is the decode hook: it checks that a YAML value fits the Go type it is
// decoded into and says in plain words what was wanted, and it parses durations.
// mapstructure calls it for every value, with to being the destination.
func CheckValue(from, to reflect.Value) (any, error) {
	data := from.Interface()
	if to.Type() == durationType {
		return parseDuration(data)
	}
	switch to.Kind() {
	case reflect.String:
		if _, ok := data.(string); !ok {
			return nil, wantString(data)
		}
	case reflect.Bool:
		if _, ok := data.(bool); !ok {
			return nil, wantGot("true or false", data)
		}
	case reflect.Int:
		return wholeNumber(data)
	case reflect.Float64:
		if !isNumber(data) {
			return nil, wantGot("a number", data)
		}
	case reflect.Slice:
		if _, ok := data.([]any); !ok {
			return nil, wantGot("a list", data)
		}
	case reflect.Struct:
		if _, ok := data.(map[string]any); !ok {
			return nil, wantGot("a mapping of keys", data)
		}
	}
	return data, nil
}

// parseDuration accepts Go duration strings ("90m", "2h", "1h30m"). A bare number is
// refused: mapstructure would read 7200 as 7200 nanoseconds.
func parseDuration(data any) (any, error) {
	s, ok := data.(string)
	if !ok {
		return nil, wantGot(`a duration with a unit, such as "90m" or "2h"`, data)
	}
	d, err := time.ParseDuration(s)
	if err != nil {
		return nil, fmt.Errorf(`invalid duration %q: want a number and a unit (s, m, h), such as "90m" or "2h"`, s)
	}
	return d, nil
}

func wholeNumber(data any) (any, error) {
	switch n := data.(type) {
	case int, int64, uint64:
		return n, nil
	case float64:
		if n == math.Trunc(n) && math.Abs(n) < 1<<53 {
			return int(n), nil
		}
	}
	return nil, wantGot("a whole number", data)
}

func isNumber(data any) bool {
	switch data.(type) {
	case int, int64, uint64, float64:
		return true
	}
	return false
}

// wantString explains a non-string value where text belongs: a number or true/false
// becomes text when quoted (name: "7"); a list or mapping cannot.
func wantString(data any) error {
	switch data.(type) {
	case []any, map[string]any, map[any]any:
		return wantGot("a string", data)
	}
	return wantGot("a string (put it in quotes)", data)
}

func wantGot(want string, data any) error {
	return fmt.Errorf("want %s, got %s", want, describe(data))
}

// describe names a YAML value for a message: its text for scalars, its shape for
// lists and mappings.
func describe(data any) string {
	switch v := data.(type) {
	case string:
		return strconv.Quote(v)
	case []any:
		return "a list"
	case map[string]any, map[any]any:
		return "a mapping"
	case float64:
		return strconv.FormatFloat(v, 'g', -1, 64)
	}
	return fmt.Sprint(data)
}

// DecodeProblems turns the errors of a mapstructure decode into root (mapstructure
// errors, joined) into problems with our key paths; root's mapstructure tags name the
// known keys. mapstructure names list items and nested keys as
// "loggers[0].line.columns[2]" already; an unknown key arrives as "'loggers[0]' has
// invalid keys: baudrate, speed" (go-viper/mapstructure v2.4.0, decodeStructFromMap),
// which becomes one problem per key.
func DecodeProblems(root reflect.Type, err error) []*Problem {
	var out []*Problem
	for _, leaf := range leaves(err) {
		var de *mapstructure.DecodeError
		if !errors.As(leaf, &de) {
			out = append(out, &Problem{Msg: leaf.Error()})
			continue
		}
		msg := de.Unwrap().Error()
		if keys, ok := strings.CutPrefix(msg, "has invalid keys: "); ok {
			out = append(out, unknownKeys(root, de.Name(), strings.Split(keys, ", "))...)
			continue
		}
		if name := de.Name(); strings.HasSuffix(name, "material") && strings.HasPrefix(msg, `want a mapping of keys, got "`) {
			msg += fmt.Sprintf("; write a material's name as material: {name: %s}", strings.TrimSuffix(strings.TrimPrefix(msg, `want a mapping of keys, got "`), `"`))
		}
		out = append(out, &Problem{Key: de.Name(), Msg: msg})
	}
	return out
}

// leaves flattens the error tree of a decode: mapstructure wraps its errors.Join of
// DecodeErrors in one fmt.Errorf ("decoding failed due to the following error(s)").
func leaves(err error) []error {
	if _, ok := err.(*mapstructure.DecodeError); ok {
		return []error{err}
	}
	switch e := err.(type) {
	case interface{ Unwrap() []error }:
		var out []error
		for _, inner := range e.Unwrap() {
			out = append(out, leaves(inner)...)
		}
		return out
	case interface{ Unwrap() error }:
		if inner := e.Unwrap(); inner != nil && errors.As(inner, new(*mapstructure.DecodeError)) {
			return leaves(inner)
		}
	}
	return []error{err}
}

func unknownKeys(root reflect.Type, parent string, keys []string) []*Problem {
	known := strings.Join(knownKeys(root, parent), ", ")
	out := make([]*Problem, len(keys))
	for i, k := range keys {
		path := k
		if parent != "" {
			path = parent + "." + k
		}
		msg := fmt.Sprintf("unknown key %q (known keys here: %s)", path, known)
		if strings.Contains(k, ".") {
			msg += "; write a dotted key as nested keys"
		}
		out[i] = &Problem{Msg: msg, at: path}
	}
	return out
}

var indexPart = regexp.MustCompile(`\[\d+\]`)

// knownKeys lists the keys allowed at a key path such as "loggers[0].line" under
// root, read from the mapstructure tags of the schema.
func knownKeys(root reflect.Type, path string) []string {
	t := root
	if path != "" {
		for _, part := range strings.Split(indexPart.ReplaceAllString(path, ""), ".") {
			f, ok := fieldByTag(t, part)
			if !ok {
				return nil
			}
			t = f.Type
			for t.Kind() == reflect.Slice || t.Kind() == reflect.Pointer {
				t = t.Elem()
			}
		}
	}
	if t.Kind() != reflect.Struct {
		return nil
	}
	var keys []string
	for _, f := range keyFields(t) {
		if tag := f.Tag.Get("mapstructure"); tag != "-" {
			keys = append(keys, tag)
		}
	}
	sort.Strings(keys)
	return keys
}

func fieldByTag(t reflect.Type, tag string) (reflect.StructField, bool) {
	if t.Kind() != reflect.Struct {
		return reflect.StructField{}, false
	}
	for _, f := range keyFields(t) {
		if f.Tag.Get("mapstructure") == tag {
			return f, true
		}
	}
	return reflect.StructField{}, false
}

// keyFields lists the fields of struct t that are keys, with the fields of an
// embedded struct tagged ",squash" (config.Logger's daq.Logger) in its place, as
// mapstructure reads them.
func keyFields(t reflect.Type) []reflect.StructField {
	var out []reflect.StructField
	for i := range t.NumField() {
		f := t.Field(i)
		if f.Anonymous && f.Tag.Get("mapstructure") == ",squash" {
			out = append(out, keyFields(f.Type)...)
			continue
		}
		out = append(out, f)
	}
	return out
}

// yamlLine matches one located message of go.yaml.in/yaml/v3: "yaml: line 3: …" for
// syntax errors, "  line 3: …" inside "yaml: unmarshal errors:".
var yamlLine = regexp.MustCompile(`line (\d+): (.*)`)

// YAMLProblems turns a YAML parser error into problems with line numbers.
//
// For a syntax error go.yaml.in/yaml/v3 (v3.0.4, decode.go, parser.fail) reports the
// line where the enclosing block starts, not the line of the mistake, which is often
// a few lines further down; such a line is marked "near" here, and syntaxProblems
// replaces it with the mistake's line where it can. The lines of "unmarshal errors"
// (such as a key given twice) are exact.
func YAMLProblems(err error) []*Problem {
	approx := !strings.HasPrefix(err.Error(), "yaml: unmarshal errors:")
	var out []*Problem
	for _, text := range strings.Split(err.Error(), "\n") {
		text = strings.TrimSpace(strings.TrimPrefix(text, "yaml: "))
		if text == "" || text == "unmarshal errors:" {
			continue
		}
		p := &Problem{Msg: text}
		if m := yamlLine.FindStringSubmatch(text); m != nil {
			p.Line, _ = strconv.Atoi(m[1])
			p.Msg = m[2]
			p.near = approx
		}
		out = append(out, p)
	}
	if len(out) == 0 {
		out = append(out, &Problem{Msg: err.Error()})
	}
	return out
}
