package yamlfile

import (
	"fmt"
	"io"
	"os"
	"reflect"
	"slices"
	"strings"

	"github.com/go-viper/mapstructure/v2"
	"go.yaml.in/yaml/v3"
)

// MaxFileSize bounds a file; a larger file is refused before parsing.
const MaxFileSize = 1 << 20

// ReadFile reads the file at path, refusing one larger than MaxFileSize.
func ReadFile(path string) ([]byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("config: %w", err)
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, MaxFileSize+1))
	if err != nil {
		return nil, fmt.Errorf("config: read %s: %w", path, err)
	}
	if len(data) > MaxFileSize {
		return nil, &Problem{File: path, Msg: fmt.Sprintf("larger than %d bytes; is this a settle configuration?", MaxFileSize)}
	}
	return data, nil
}

// Decode decodes raw (a YAML document read into any) into out, a pointer to a struct
// whose mapstructure tags are the keys, strictly: unknown keys and values of the
// wrong type are problems (CheckValue, DecodeProblems). mapstructure decodes every
// value it can, so out holds the rest.
func Decode(raw, out any) []*Problem {
	dec, err := mapstructure.NewDecoder(&mapstructure.DecoderConfig{
		Result: out, ErrorUnused: true, DecodeHook: mapstructure.DecodeHookFuncValue(CheckValue),
	})
	if err != nil {
		return []*Problem{{Msg: err.Error()}} // only for a Result that is not a pointer
	}
	if err := dec.Decode(raw); err != nil {
		return DecodeProblems(reflect.TypeOf(out).Elem(), err)
	}
	return nil
}

// AfterDecode returns the decoding problems followed by the validation problems of
// what was decoded (mapstructure decodes every value it can), leaving out a
// validation problem at or under a key that could not be decoded: "baud: want a
// whole number, got "fast"" is not followed by "baud: must be positive, got 0".
func AfterDecode(decoded, validated []*Problem) []*Problem {
	out := decoded
	for _, p := range validated {
		if !slices.ContainsFunc(decoded, func(d *Problem) bool { return d.Key != "" && under(p.Key, d.Key) }) {
			out = append(out, p)
		}
	}
	return out
}

// under reports whether key is parent or a key path inside it.
func under(key, parent string) bool {
	rest, ok := strings.CutPrefix(key, parent)
	return ok && (rest == "" || rest[0] == '.' || rest[0] == '[')
}

// Unmarshal reads data, a file that ReadTree has read without a problem, as one YAML
// document of plain values (maps, lists, scalars; nil for an empty file), for Decode.
func Unmarshal(data []byte) (any, []*Problem) {
	var raw any
	if err := yaml.Unmarshal(data, &raw); err != nil {
		return nil, YAMLProblems(err)
	}
	return raw, nil
}
