package config

import (
	"strings"
	"testing"

	"github.com/settle-lab/settle/internal/yamlfile"
	"github.com/settle-lab/settle/predict"
)

// Each specimen mistake is reported with its key path.
func TestSpecimenProblems(t *testing.T) {
	good := predict.Specimen{Shape: "short-cylinder", SizeM: 0.05, LengthM: 0.2, Sensor: "surface",
		Material: predict.SpecimenMaterial{Name: "concrete"}}
	if ps := SpecimenProblems("channels[0]", &good); len(ps) != 0 {
		t.Fatalf("good specimen: %v", ps)
	}
	for _, c := range []struct {
		edit func(*predict.Specimen)
		key  string
	}{
		{func(s *predict.Specimen) { s.Shape = "cube" }, "channels[0].specimen.shape"},
		{func(s *predict.Specimen) { s.Sensor = "middle" }, "channels[0].specimen.sensor"},
		{func(s *predict.Specimen) { s.SizeM = -1 }, "channels[0].specimen.size_m"},
		{func(s *predict.Specimen) { s.LengthM = 0 }, "channels[0].specimen.length_m"},
		{func(s *predict.Specimen) { s.WidthM = 0.1 }, "channels[0].specimen.width_m"},
		{func(s *predict.Specimen) { s.Shape = "block" }, "channels[0].specimen.width_m"},
		{func(s *predict.Specimen) { s.Material = predict.SpecimenMaterial{Density: 2300, SpecificHeat: 880} }, "channels[0].specimen.material.conductivity_w_mk"},
		{func(s *predict.Specimen) { s.Material.Emissivity = 1.5 }, "channels[0].specimen.material.emissivity"},
		{func(s *predict.Specimen) { s.Air = "fan" }, "channels[0].specimen.convection"},
		{func(s *predict.Specimen) { s.Material.Finish = "painted" }, "channels[0].specimen.material.finish"},
		{func(s *predict.Specimen) {
			s.Material = predict.SpecimenMaterial{Density: 1, SpecificHeat: 1, Conductivity: 1, Finish: "bright"}
		}, "channels[0].specimen.material.finish"},
		{func(s *predict.Specimen) { s.Air = "chamber" }, "channels[0].specimen.chamber_c"},
		{func(s *predict.Specimen) { s.Air, s.ChamberC = "moving", ptr(180) }, "channels[0].specimen.chamber_c"},
	} {
		s := good
		c.edit(&s)
		err := yamlfile.Join(SpecimenProblems("channels[0]", &s))
		if err == nil || !strings.Contains(err.Error(), c.key) {
			t.Errorf("%+v: %v, want a problem at %s", s, err, c.key)
		}
	}
	oven := good
	oven.Air, oven.ChamberC = "chamber", ptr(180)
	if err := yamlfile.Join(SpecimenProblems("channels[0]", &oven)); err != nil {
		t.Errorf("specimen in a chamber at 180 °C: %v", err)
	}
	if yamlfile.Join(SpecimenProblems("channels[0]", nil)) != nil {
		t.Error("nil specimen has problems")
	}
}
