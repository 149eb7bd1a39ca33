package experiment

import (
	"fmt"
	"testing"

	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/train"
)

func TestBatchUnitsBlocks(t *testing.T) {
	sc, err := synth.Generate(synth.Config{N: 30, P: 8, Seed: 2, Targets: 1})
	if err != nil {
		t.Fatal(err)
	}
	exp, err := ParseExperiment([]byte(`
[cv]
folds = 3
repeats = 2
[permutation]
count = 25
chunk = 8
[[model]]
name = "ridge"
[model.ridge]
[[model]]
name = "net"
[model.network]
[[model.network.branch]]
input = "functional"
layers = [{kind = "n2g", size = 4}]
` + minimalCohort))
	if err != nil {
		t.Fatal(err)
	}
	r := &train.Runner{Design: exp.Design(), Cohort: sc.Cohort}
	tests := []struct {
		block int
		want  string // the permutation blocks, as model:first-end
	}{
		// Default: one chunk for the baseline, DefaultBlock for the network.
		{0, "[ridge:0-8 ridge:8-16 ridge:16-24 ridge:24-25 net:0-10 net:10-20 net:20-25]"},
		// The baseline's blocks are whole chunks.
		{5, "[ridge:0-8 ridge:8-16 ridge:16-24 ridge:24-25 net:0-5 net:5-10 net:10-15 net:15-20 net:20-25]"},
		{12, "[ridge:0-16 ridge:16-25 net:0-12 net:12-24 net:24-25]"},
	}
	for _, tt := range tests {
		units, err := BatchUnits(r, exp, tt.block)
		if err != nil {
			t.Fatal(err)
		}
		var blocks []string
		for i, u := range units {
			if u.Index != i {
				t.Fatalf("unit %d has index %d", i, u.Index)
			}
			if i < 12 {
				// 2 models × 3 folds × 2 repeats, in the order of Units.
				if u.Kind != BatchModel || u.Select != i || u.Model != exp.Models[i/6].Name || u.Unit.Repeat != i%6/3 || u.Unit.Fold != i%3 {
					t.Fatalf("unit %d: %+v", i, u)
				}
				continue
			}
			blocks = append(blocks, fmt.Sprintf("%s:%d-%d", u.Model, u.First, u.End))
		}
		if got := fmt.Sprint(blocks); got != tt.want {
			t.Errorf("block %d: %s, want %s", tt.block, got, tt.want)
		}
	}
}
