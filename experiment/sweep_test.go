package experiment

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/train"
)

const sweptModels = `
[permutation]
count = 5
models = ["net"]

[[model]]
name = "mean"
[model.mean]

[[model]]
name = "net"
[model.network]
epochs = 10
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2n", channels = 4}, {kind = "n2g", size = 4}]

[[sweep]]
model = "net"
key = "network.epochs"
values = [2, 3]

[[sweep]]
model = "net"
key = "network.optimizer.rate"
values = [1e-3, 1e-2]
`

func TestExpandSweepGrid(t *testing.T) {
	exp, err := ParseExperiment([]byte(sweptModels + minimalCohort))
	if err != nil {
		t.Fatal(err)
	}
	expanded, variants, err := exp.Expand()
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, m := range expanded.Models {
		names = append(names, m.Name)
	}
	want := "mean net[epochs=2,rate=0.001] net[epochs=2,rate=0.01] net[epochs=3,rate=0.001] net[epochs=3,rate=0.01]"
	if got := strings.Join(names, " "); got != want {
		t.Fatalf("models %s, want %s", got, want)
	}
	if len(variants) != 4 || variants[3].Base != "net" || variants[3].Name != names[4] {
		t.Fatalf("variants %+v", variants)
	}
	last := expanded.Models[4].Network
	if *last.Epochs != 3 || *last.Optimizer.Rate != 1e-2 || len(last.Branches) != 1 {
		t.Errorf("last variant: epochs %d, rate %v, %d branches", *last.Epochs, *last.Optimizer.Rate, len(last.Branches))
	}
	if got := strings.Join(expanded.Permutation.Models, " "); got != strings.Join(names[1:], " ") {
		t.Errorf("permutation.models = %s, want the variants", got)
	}
	if len(exp.Models) != 2 || *exp.Models[1].Network.Epochs != 10 {
		t.Error("Expand changed the experiment it expanded")
	}
	// The expanded experiment, written out, reads back as itself, with
	// the same variants: a run folder's experiment.toml reruns the same
	// models.
	raw, err := toml.Marshal(expanded)
	if err != nil {
		t.Fatal(err)
	}
	again, err := ParseExperiment(raw)
	if err != nil {
		t.Fatalf("expanded experiment does not read back: %v", err)
	}
	again2, vs, err := again.Expand()
	if err != nil || len(vs) != 4 || vs[3].Name != names[4] || vs[3].Keys[1] != "network.optimizer.rate" {
		t.Fatalf("expanding again: %v, variants %+v", err, vs)
	}
	raw2, _ := toml.Marshal(again2)
	if !bytes.Equal(raw, raw2) {
		t.Error("expanded experiment changes when read back")
	}
}

func TestExpandSweepErrors(t *testing.T) {
	base := "[[model]]\nname = \"net\"\n[model.network]\n[[model.network.branch]]\ninput = \"functional\"\nlayers = [{kind = \"n2g\", size = 4}]\n"
	tests := []struct{ name, sweep, want string }{
		{"no such model", "[[sweep]]\nmodel = \"nett\"\nkey = \"network.epochs\"\nvalues = [1]\n", `sweep[0].model: no model is named "nett"`},
		{"no values", "[[sweep]]\nmodel = \"net\"\nkey = \"network.epochs\"\nvalues = []\n", `sweep[0].values`},
		{"unknown key", "[[sweep]]\nmodel = \"net\"\nkey = \"network.epochz\"\nvalues = [1]\n", `unknown key "network.epochz"`},
		{"not a table", "[[sweep]]\nmodel = \"net\"\nkey = \"ridge.alphas\"\nvalues = [1]\n", `sweep[0].key: "ridge" is not a table`},
		{"wrong type", "[[sweep]]\nmodel = \"net\"\nkey = \"network.epochs\"\nvalues = [\"many\"]\n", `key "network.epochs"`},
		{"invalid value", "[[sweep]]\nmodel = \"net\"\nkey = \"network.epochs\"\nvalues = [-3]\n", `epochs`},
		{"name", "[[sweep]]\nmodel = \"net\"\nkey = \"name\"\nvalues = [\"x\"]\n", `sweep[0].key`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			exp, err := ParseExperiment([]byte(base + tt.sweep + minimalCohort))
			if err == nil {
				_, _, err = exp.Expand()
			}
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("got error %v, want one containing %q", err, tt.want)
			}
		})
	}
}

func TestRankSweepUsesInnerValidationOnly(t *testing.T) {
	exp := &Experiment{Models: []train.ModelConfig{{Name: "a[x=1]"}, {Name: "a[x=2]"}, {Name: "b[y=1]"}}}
	variants := []Variant{{Base: "a", Name: "a[x=1]"}, {Base: "a", Name: "a[x=2]"}, {Base: "b", Name: "b[y=1]"}}
	res := &train.Result{Histories: make(map[train.Unit][]model.Epoch)}
	nan := math.NaN()
	// a[x=1] keeps epochs whose validation losses average 0.5; a[x=2]
	// 0.25 (the best-marked epoch counts, not the lowest); b has none.
	losses := map[int][2][]model.Epoch{
		0: {{{ValidLoss: 0.6, Best: true}, {ValidLoss: 0.7}}, {{ValidLoss: 0.4, Best: true}}},
		1: {{{ValidLoss: 0.1}, {ValidLoss: 0.3, Best: true}}, {{ValidLoss: 0.2, Best: true}}},
		2: {{{ValidLoss: nan}}, {{ValidLoss: nan}}},
	}
	for m := range 3 {
		for f := range 2 {
			u := train.Unit{Model: m, Split: f, Fold: f}
			res.Units = append(res.Units, u)
			res.Histories[u] = losses[m][f]
		}
	}
	ranks := RankSweep(variants, exp, res)
	if ranks[0].Name != "a[x=2]" || ranks[0].Rank != 1 || math.Abs(ranks[0].InnerLoss-0.25) > 1e-15 ||
		ranks[1].Name != "a[x=1]" || ranks[1].Rank != 2 || math.Abs(ranks[1].InnerLoss-0.5) > 1e-15 ||
		ranks[2].Name != "b[y=1]" || ranks[2].Rank != 0 || !math.IsNaN(ranks[2].InnerLoss) {
		t.Fatalf("ranks %+v", ranks)
	}
}

// The inner loss of an ensemble's unit is the mean over its members of
// each member's kept validation loss (the definition of the ranking,
// common practice, no source).
func TestKeptValidLossOfEnsemble(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name string
		h    []model.Epoch
		want float64
	}{
		{"single", []model.Epoch{{Epoch: 1, ValidLoss: 0.5, Best: true}, {Epoch: 2, ValidLoss: 0.6}}, 0.5},
		{"members", []model.Epoch{
			{Member: 1, Epoch: 1, ValidLoss: 0.5, Best: true}, {Member: 1, Epoch: 2, ValidLoss: 0.6},
			{Member: 2, Epoch: 1, ValidLoss: 0.9, Best: true}, {Member: 2, Epoch: 2, ValidLoss: 0.2, Best: true},
			{Member: 3, Epoch: 1, ValidLoss: 0.4}, {Member: 3, Epoch: 2, ValidLoss: 0.3},
		}, (0.5 + 0.2 + 0.3) / 3},
		// Best marks each new best so far: the last one is kept.
		{"improving", []model.Epoch{{Epoch: 1, ValidLoss: 0.9, Best: true}, {Epoch: 2, ValidLoss: 0.4, Best: true}, {Epoch: 3, ValidLoss: 0.5}}, 0.4},
		{"a member without", []model.Epoch{{Member: 1, ValidLoss: 0.5, Best: true}, {Member: 2, ValidLoss: nan}}, nan},
		{"none", nil, nan},
	}
	for _, tt := range tests {
		got := keptValidLoss(tt.h)
		if math.IsNaN(tt.want) != math.IsNaN(got) || !math.IsNaN(got) && math.Abs(got-tt.want) > 1e-15 {
			t.Errorf("%s: keptValidLoss = %v, want %v", tt.name, got, tt.want)
		}
	}
}
