package config

import (
	"reflect"

	"github.com/go-viper/mapstructure/v2"
	"go.yaml.in/yaml/v3"
)

// LoadSpecimen reads a specimen file (`settle fit --specimen`, `settle run-start
// --specimen-file`): the keys of Specimen at the top. See ParseSpecimen.
func LoadSpecimen(path string) (*Specimen, error) {
	data, err := readFile(path)
	if err != nil {
		return nil, err
	}
	return ParseSpecimen(path, data)
}

// ParseSpecimen reads a specimen file already in memory; name stands for the file in
// messages ("" for none). It reports every problem at once, in the words of
// `settle config check` and with the line of each key: a YAML mistake, keys that
// differ only in case, unknown keys, values of the wrong type and the checks of
// SpecimenProblems, with key paths such as "material.name".
func ParseSpecimen(name string, data []byte) (*Specimen, error) {
	t, problems := readTree(data)
	if problems != nil {
		return nil, inFile(name, problems)
	}
	var raw any
	if err := yaml.Unmarshal(data, &raw); err != nil {
		return nil, inFile(name, yamlProblems(err))
	}
	switch raw.(type) {
	case nil:
		return nil, inFile(name, []*Problem{{Msg: "empty: a specimen needs shape, size_m, sensor and material"}})
	case map[string]any:
	default:
		return nil, inFile(name, []*Problem{{Line: 1, Msg: "a specimen file must be a mapping of keys (shape, size_m, length_m, width_m, sensor, material, convection, chamber_c)"}})
	}
	var s Specimen
	dec, err := mapstructure.NewDecoder(&mapstructure.DecoderConfig{
		Result: &s, ErrorUnused: true, DecodeHook: mapstructure.DecodeHookFuncValue(checkValue),
	})
	if err != nil {
		return nil, err // only for a bad Result, which &s is not
	}
	var decoded []*Problem
	if err := dec.Decode(raw); err != nil {
		decoded = decodeProblemsIn(reflect.TypeFor[Specimen](), err)
	}
	if problems := afterDecode(decoded, specimenProblems("", &s)); len(problems) > 0 {
		return nil, inFile(name, t.locate(problems))
	}
	return &s, nil
}
