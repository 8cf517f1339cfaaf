package predict

import "testing"

// A channel's specimen reaches its tracker and overrides TrackerOptions.Specimen;
// a channel without one keeps the options' (none here). config's
// TestChannelSpecsSpecimen builds such specs from a configuration.
func TestBenchSpecimenPerChannel(t *testing.T) {
	sp, err := Specimen{Shape: "block", SizeM: 0.05, LengthM: 0.2, WidthM: 0.15, Sensor: "surface",
		Material: SpecimenMaterial{Name: "concrete"}}.Resolved()
	if err != nil {
		t.Fatal(err)
	}
	specs := []ChannelSpec{{Name: "a"}, {Name: "b", Specimen: &sp}}
	b := NewBench(specs, TrackerOptions{})
	if b.trackers[1].opt.Specimen != specs[1].Specimen || b.trackers[0].opt.Specimen != nil {
		t.Errorf("trackers do not carry their channel's specimen")
	}
}
