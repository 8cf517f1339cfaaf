package config

import (
	"reflect"
	"strings"

	"github.com/settle-lab/settle/internal/yamlfile"
)

// Problem is one thing wrong with a configuration: a YAML syntax error, an unknown
// key, a value of the wrong type or a value that fails validation. Load, Parse and
// Validate return their problems joined with errors.Join; Problems takes them apart.
// It is the problem of the YAML reader under the configuration and specimen files
// (internal/yamlfile), so both are printed the same way.
type Problem = yamlfile.Problem

// Problems lists the problems inside err, in order: err itself when it is a single
// *Problem, or the *Problem values of an errors.Join tree. Errors that are not
// problems (for example a file that cannot be read) are returned as a Problem with
// only Msg set, so that a caller can print every entry the same way.
func Problems(err error) []*Problem { return yamlfile.Problems(err) }

// envKeys are the keys an environment variable can override: a problem with such a
// key names the variable instead of a line of the file, when the variable is set.
var envKeys = map[string]string{"listen": EnvListen, "data_dir": EnvDataDir, "http.token": EnvToken}

// decodeProblems turns the errors of viper's UnmarshalExact into problems with our
// key paths (yamlfile.DecodeProblems, with the keys of Config).
func decodeProblems(err error) []*Problem {
	return yamlfile.DecodeProblems(reflect.TypeFor[Config](), err)
}

// yamlProblems is yamlfile.YAMLProblems for the whole configuration, where a file
// that is not a mapping gets the keys it should have.
func yamlProblems(err error) []*Problem {
	ps := yamlfile.YAMLProblems(err)
	for _, p := range ps {
		if strings.Contains(p.Msg, "into map[string]interface {}") {
			p.Msg = "the file must be a mapping of keys (listen, data_dir, loggers, channels)"
		}
	}
	return ps
}
