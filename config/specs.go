package config

import (
	"fmt"
	"math"

	"github.com/settle-lab/settle/predict"
)

// ChannelSpecs builds the engine's bench specs (predict.ChannelSpec) from configured
// channels: a target's nil Celsius becomes NaN (a Within target), and a specimen's
// named material is resolved (predict.Specimen.Resolved, which also checks the
// result).
//
// It lives here, not in predict, so that the engine takes only its own types and
// config composes them from the file: the daemon and `settle report` call it with a
// configuration that Validate has passed. Channels built in code get the same
// refusals, each naming the key path (e.g. channels[2].targets[0]): a duplicate
// channel name or an ambient that names no other channel (the rules of Validate), a
// specimen the engine refuses, and a target the engine cannot take: both or
// neither of celsius and within (the engine has no band around a fixed temperature;
// Validate refuses {celsius, within} too, so a checked file never reaches this), or a
// band that is not positive.
func ChannelSpecs(channels []Channel) ([]predict.ChannelSpec, error) {
	index := channelIndex(channels)
	for i, c := range channels {
		if first, ok := index[c.Name]; ok && first != i {
			return nil, fmt.Errorf("predict: channels[%d].name: duplicate channel %q", i, c.Name)
		}
	}
	specs := make([]predict.ChannelSpec, len(channels))
	for i, c := range channels {
		if ambientFault(c, index) != "" {
			return nil, fmt.Errorf("predict: channels[%d].ambient: %q is not another configured channel", i, c.Ambient)
		}
		specs[i] = predict.ChannelSpec{Name: c.Name, Ambient: c.Ambient, Role: c.Role}
		if c.Specimen != nil {
			sp, err := specimenSpec(fmt.Sprintf("channels[%d]", i), c.Specimen)
			if err != nil {
				return nil, fmt.Errorf("predict: %w", err)
			}
			specs[i].Specimen = &sp
		}
		for j, t := range c.Targets {
			tg, err := targetSpec(t)
			if err != nil {
				return nil, fmt.Errorf("predict: channels[%d].targets[%d] (%q): %w", i, j, t.Name, err)
			}
			specs[i].Targets = append(specs[i].Targets, tg)
		}
	}
	return specs, nil
}

// specimenSpec resolves a channel's specimen (key is the channel's key path): the
// material name filled in and the result checked by the engine (Validate has
// checked the specimen as given, in the words of a file; it is not checked again
// here); errors name the key.
func specimenSpec(key string, s *predict.Specimen) (predict.Specimen, error) {
	r, err := s.Resolved()
	if err != nil {
		return predict.Specimen{}, fmt.Errorf("%s.specimen.%w", key, err)
	}
	return r, nil
}

// targetSpec converts one configured target.
func targetSpec(t Target) (predict.Target, error) {
	switch {
	case t.Celsius != nil && t.Within != nil:
		return predict.Target{}, fmt.Errorf("both celsius and within set")
	case t.Celsius == nil && t.Within == nil:
		return predict.Target{}, fmt.Errorf("neither celsius nor within set")
	case t.Within != nil && !(*t.Within > 0):
		return predict.Target{}, fmt.Errorf("within %g °C must be positive", *t.Within)
	}
	tg := predict.Target{Name: t.Name, Celsius: math.NaN(), Hold: t.Hold, Handling: t.Handling}
	if t.Celsius != nil {
		tg.Celsius = *t.Celsius
	} else {
		tg.Within = *t.Within
	}
	return tg, nil
}
