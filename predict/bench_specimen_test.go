package predict

import (
	"strings"
	"testing"

	"github.com/settle-lab/settle/config"
)

// A configured specimen reaches its channel's tracker: a material by name takes the
// table's properties (concrete, k = 1.4 W/(m·K), predict/material), and a bad one
// fails with its key path.
func TestSpecsFromConfigSpecimen(t *testing.T) {
	ok := &config.Specimen{Shape: "block", SizeM: 0.05, LengthM: 0.2, WidthM: 0.15, Sensor: "surface",
		Material: config.SpecimenMaterial{Name: "concrete"}}
	specs, err := SpecsFromConfig([]config.Channel{{Name: "a"}, {Name: "b", Specimen: ok}})
	if err != nil {
		t.Fatal(err)
	}
	if specs[0].Specimen != nil || specs[1].Specimen == nil || specs[1].Specimen.Material.Conductivity != 1.4 {
		t.Fatalf("specs %+v", specs)
	}
	set := 180.0
	oven := *ok
	oven.Convection, oven.ChamberC = "chamber", &set
	ovenSpecs, err := SpecsFromConfig([]config.Channel{{Name: "c", Specimen: &oven}})
	if err != nil || ovenSpecs[0].Specimen.Air != ConvectionChamber || *ovenSpecs[0].Specimen.ChamberC != 180 {
		t.Errorf("chamber specimen %+v, err %v: want convection chamber at 180 °C", ovenSpecs, err)
	}
	b := NewBench(specs, TrackerOptions{})
	if b.trackers[1].opt.Specimen != specs[1].Specimen || b.trackers[0].opt.Specimen != nil {
		t.Errorf("trackers do not carry their channel's specimen")
	}
	for _, c := range []struct {
		sp   config.Specimen
		want string
	}{
		{config.Specimen{Shape: "cube", SizeM: 0.05, Sensor: "center", Material: config.SpecimenMaterial{Name: "concrete"}}, "channels[0].specimen.shape"},
		{config.Specimen{Shape: "block", SizeM: 0.05, LengthM: 0.2, Sensor: "center", Material: config.SpecimenMaterial{Name: "concrete"}}, "channels[0].specimen.width_m"},
		{config.Specimen{Shape: "slab", SizeM: 0.05, Sensor: "center", Material: config.SpecimenMaterial{Name: "unobtainium"}}, "channels[0].specimen.material.name"},
	} {
		_, err := SpecsFromConfig([]config.Channel{{Name: "a", Specimen: &c.sp}})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one naming %s", c.sp, err, c.want)
		}
	}
}
