package experiment

import (
	"reflect"
	"testing"
)

// TestRecommendedNetworks: examples/networks.toml parses, holds only
// networks (two to four), and the demo runs exactly those networks, up
// to the size of the ensemble (the demo may train fewer per fold to stay
// short).
func TestRecommendedNetworks(t *testing.T) {
	rec, err := ReadExperiment("../examples/networks.toml")
	if err != nil {
		t.Fatal(err)
	}
	if n := len(rec.Models); n < 2 || n > 4 {
		t.Fatalf("examples/networks.toml: %d models, want 2 to 4", n)
	}
	for _, m := range rec.Models {
		if m.Network == nil {
			t.Errorf("examples/networks.toml: model %q is not a network", m.Name)
		}
	}
	demo, err := ReadExperiment("../examples/demo/experiment.toml")
	if err != nil {
		t.Fatal(err)
	}
	demoNets := map[string]int{}
	for i, m := range demo.Models {
		if m.Network != nil {
			demoNets[m.Name] = i
		}
	}
	if len(demoNets) != len(rec.Models) {
		t.Errorf("the demo runs %d networks, examples/networks.toml recommends %d", len(demoNets), len(rec.Models))
	}
	for _, m := range rec.Models {
		i, ok := demoNets[m.Name]
		if !ok {
			t.Errorf("the demo does not run the recommended network %q", m.Name)
			continue
		}
		got, want := *demo.Models[i].Network, *m.Network
		got.Ensemble, want.Ensemble = nil, nil
		if !reflect.DeepEqual(got, want) {
			t.Errorf("the demo's network %q differs from examples/networks.toml's (beyond ensemble):\n got %+v\nwant %+v", m.Name, got, want)
		}
	}
}
