package config

import (
	"strings"
	"testing"
)

// Each specimen mistake is reported with its key path.
func TestSpecimenProblems(t *testing.T) {
	good := Specimen{Shape: "short-cylinder", SizeM: 0.05, LengthM: 0.2, Sensor: "surface",
		Material: SpecimenMaterial{Name: "concrete"}}
	if ps := SpecimenProblems("channels[0]", &good); len(ps) != 0 {
		t.Fatalf("good specimen: %v", ps)
	}
	for _, c := range []struct {
		edit func(*Specimen)
		key  string
	}{
		{func(s *Specimen) { s.Shape = "cube" }, "channels[0].specimen.shape"},
		{func(s *Specimen) { s.Sensor = "middle" }, "channels[0].specimen.sensor"},
		{func(s *Specimen) { s.SizeM = -1 }, "channels[0].specimen.size_m"},
		{func(s *Specimen) { s.LengthM = 0 }, "channels[0].specimen.length_m"},
		{func(s *Specimen) { s.WidthM = 0.1 }, "channels[0].specimen.width_m"},
		{func(s *Specimen) { s.Shape = "block" }, "channels[0].specimen.width_m"},
		{func(s *Specimen) { s.Material = SpecimenMaterial{Density: 2300, SpecificHeat: 880} }, "channels[0].specimen.material.conductivity_w_mk"},
		{func(s *Specimen) { s.Material.Emissivity = 1.5 }, "channels[0].specimen.material.emissivity"},
		{func(s *Specimen) { s.Convection = "fan" }, "channels[0].specimen.convection"},
		{func(s *Specimen) { s.Material.Finish = "painted" }, "channels[0].specimen.material.finish"},
		{func(s *Specimen) {
			s.Material = SpecimenMaterial{Density: 1, SpecificHeat: 1, Conductivity: 1, Finish: "bright"}
		}, "channels[0].specimen.material.finish"},
		{func(s *Specimen) { s.Convection = "chamber" }, "channels[0].specimen.chamber_c"},
		{func(s *Specimen) { s.Convection, s.ChamberC = "moving", ptr(180) }, "channels[0].specimen.chamber_c"},
	} {
		s := good
		c.edit(&s)
		err := s.Check("channels[0]")
		if err == nil || !strings.Contains(err.Error(), c.key) {
			t.Errorf("%+v: %v, want a problem at %s", s, err, c.key)
		}
	}
	oven := good
	oven.Convection, oven.ChamberC = "chamber", ptr(180)
	if err := oven.Check("channels[0]"); err != nil {
		t.Errorf("specimen in a chamber at 180 °C: %v", err)
	}
	if (*Specimen)(nil).Check("channels[0]") != nil {
		t.Error("nil specimen has problems")
	}
}
