package config

import (
	"path/filepath"
	"strings"
	"testing"

	"github.com/settle-lab/settle/predict"
)

func TestChannelSpecs(t *testing.T) {
	c, w := 50.0, 1.5
	zero := 0.0
	good := []Channel{
		{Name: "s1", Ambient: "room", Targets: []Target{{Name: "handle", Celsius: &c, Handling: true}, {Name: "settled", Within: &w}}},
		{Name: "room"},
	}
	specs, err := ChannelSpecs(good)
	if err != nil {
		t.Fatal(err)
	}
	tg := specs[0].Targets
	if len(specs) != 2 || specs[0].Ambient != "room" || tg[0].Celsius != 50 || !tg[0].Handling ||
		!tg[1].IsWithin() || tg[1].Within != 1.5 || tg[1].Name != "settled" {
		t.Errorf("specs %+v", specs)
	}
	bad := []struct {
		name string
		cfg  []Channel
		want string
	}{
		{"duplicate", []Channel{{Name: "a"}, {Name: "a"}}, `channels[1].name: duplicate channel "a"`},
		{"unknown ambient", []Channel{{Name: "a", Ambient: "b"}}, `channels[0].ambient: "b"`},
		{"self ambient", []Channel{{Name: "a", Ambient: "a"}}, `channels[0].ambient: "a"`},
		{"both", []Channel{{Name: "a"}, {Name: "b", Targets: []Target{{Name: "x", Celsius: &c, Within: &w}}}}, `channels[1].targets[0] ("x"): both`},
		{"neither", []Channel{{Name: "a", Targets: []Target{{Name: "x"}}}}, `channels[0].targets[0] ("x"): neither`},
		{"zero band", []Channel{{Name: "a", Targets: []Target{{Name: "x", Within: &zero}}}}, `channels[0].targets[0] ("x"): within 0`},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			_, err := ChannelSpecs(c.cfg)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("err = %v, want it to contain %q", err, c.want)
			}
		})
	}
}

// A configured specimen reaches its channel's spec: a material by name takes the
// table's properties (concrete, k = 1.4 W/(m·K), predict/material), and a bad one
// fails with its key path. (predict's TestBenchSpecimenPerChannel: the spec's
// specimen reaches the channel's tracker.)
func TestChannelSpecsSpecimen(t *testing.T) {
	ok := &predict.Specimen{Shape: "block", SizeM: 0.05, LengthM: 0.2, WidthM: 0.15, Sensor: "surface",
		Material: predict.SpecimenMaterial{Name: "concrete"}}
	specs, err := ChannelSpecs([]Channel{{Name: "a"}, {Name: "b", Specimen: ok}})
	if err != nil {
		t.Fatal(err)
	}
	if specs[0].Specimen != nil || specs[1].Specimen == nil || specs[1].Specimen.Material.Conductivity != 1.4 {
		t.Fatalf("specs %+v", specs)
	}
	set := 180.0
	oven := *ok
	oven.Air, oven.ChamberC = "chamber", &set
	ovenSpecs, err := ChannelSpecs([]Channel{{Name: "c", Specimen: &oven}})
	if err != nil || ovenSpecs[0].Specimen.Air != predict.ConvectionChamber || *ovenSpecs[0].Specimen.ChamberC != 180 {
		t.Errorf("chamber specimen %+v, err %v: want convection chamber at 180 °C", ovenSpecs, err)
	}
	for _, c := range []struct {
		sp   predict.Specimen
		want string
	}{
		{predict.Specimen{Shape: "cube", SizeM: 0.05, Sensor: "center", Material: predict.SpecimenMaterial{Name: "concrete"}}, "channels[0].specimen.shape"},
		{predict.Specimen{Shape: "block", SizeM: 0.05, LengthM: 0.2, Sensor: "center", Material: predict.SpecimenMaterial{Name: "concrete"}}, "channels[0].specimen.width_m"},
		{predict.Specimen{Shape: "slab", SizeM: 0.05, Sensor: "center", Material: predict.SpecimenMaterial{Name: "unobtainium"}}, "channels[0].specimen.material.name"},
	} {
		_, err := ChannelSpecs([]Channel{{Name: "a", Specimen: &c.sp}})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one naming %s", c.sp, err, c.want)
		}
	}
}

// predict's TestBenchSpecimenFromConfig starts from the spec that ChannelSpecs makes
// of this channel: the same targets (the band's Celsius NaN) and the specimen as
// given (its properties need no material name).
func TestChannelSpecsConduction(t *testing.T) {
	handling, within := 50.0, 2.0
	sp := predict.Specimen{Shape: "slab", SizeM: 0.05, LengthM: 0.3, Sensor: "surface",
		Material: predict.SpecimenMaterial{Density: 2300, SpecificHeat: 880, Conductivity: 1.4, Emissivity: 0.9}}
	cfg := []Channel{{
		Name: "slab-7",
		Targets: []Target{
			{Name: "handling", Celsius: &handling, Handling: true},
			{Name: "settled", Within: &within},
		},
		Specimen: &sp,
	}}
	specs, err := ChannelSpecs(cfg)
	if err != nil {
		t.Fatal(err)
	}
	tg := specs[0].Targets
	if len(specs) != 1 || specs[0].Name != "slab-7" || *specs[0].Specimen != sp || len(tg) != 2 ||
		tg[0] != (predict.Target{Name: "handling", Celsius: 50, Handling: true}) ||
		tg[1].Name != "settled" || !tg[1].IsWithin() || tg[1].Within != 2 {
		t.Errorf("specs %+v, want slab-7 with its specimen as given and a 50 °C handling target and a 2 °C band", specs)
	}
}

// TestValidConfigsStart: every file `settle config check` passes — the example that
// `settle config example` prints and the good files in testdata — builds the engine's
// channel specs, as the daemon does at start. (The example once offered a band around
// a fixed temperature that the check passed and the daemon refused.)
func TestValidConfigsStart(t *testing.T) {
	ex, err := Parse("example.yaml", []byte(Example))
	if err != nil {
		t.Fatalf("example: %v", err)
	}
	cfgs := map[string]*Config{"example": ex}
	for _, f := range []string{"minimal.yaml", "full.yaml", "drivers.yaml"} {
		c, err := Load(filepath.Join(testdataDir, "good", f))
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		cfgs[f] = c
	}
	for name, c := range cfgs {
		if _, err := ChannelSpecs(c.Channels); err != nil {
			t.Errorf("%s passes the check but the engine refuses it: %v", name, err)
		}
	}
}
