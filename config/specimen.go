package config

import (
	"github.com/settle-lab/settle/internal/yamlfile"
	"github.com/settle-lab/settle/predict"
)

// SpecimenProblems checks a channel's specimen (predict.Specimen.Check, the one
// check of a specimen as given), with key the channel's key path (e.g.
// "channels[2]"), which it puts before each problem's key: "channels[2].specimen.
// shape". A nil s has no problems.
func SpecimenProblems(key string, s *predict.Specimen) []*Problem {
	if s == nil {
		return nil
	}
	ps := yamlfile.Problems(s.Check())
	for _, p := range ps {
		p.Key = key + ".specimen." + p.Key
	}
	return ps
}
