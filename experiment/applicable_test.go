package experiment

import (
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"
)

// applicableBase is an experiment file without models; each case of
// TestMarshalApplicable adds its own.
const applicableBase = `
seed = 7
[cohort]
participants = "participants.tsv"
targets = ["recall"]
[cohort.functional]
files = "fc/{participant_id}.tsv"
[cv]
folds = 5
`

// TestMarshalApplicable: the experiment a report shows leaves out the
// keys that do not apply, keeps those that do, and reads back as the same
// experiment (the keys left out take the values they had).
func TestMarshalApplicable(t *testing.T) {
	tests := []struct {
		name       string
		text       string
		want, gone []string
	}{
		{"ridge without a permutation test", `
[permutation]
count = 0
[[model]]
name = "ridge"
[model.ridge]
alphas = [1.0]
`, []string{"[model.ridge]", "alphas = [1.0]", "[permutation]\ncount = 0\n", "seed = 7"},
			[]string{"inner_folds", "blocks", "chunk", "[drift", "[sample_size", "[comparison", "stratify", "confounds", "network", "epochs"}},
		{"ridge with a grid, permutations of groups", `
[permutation]
count = 99
[[model]]
name = "mean"
[model.mean]
[[model]]
name = "ridge"
[model.ridge]
`, []string{"[model.mean]", "inner_folds = 5", "count = 99", "blocks = 'auto'"}, []string{"[drift"}},
		{"network on sgd with a step schedule", `
[[model]]
name = "net"
[model.network]
[model.network.optimizer]
kind = "sgd"
schedule = "step"
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2n", channels = 8}, {kind = "dropout", rate = 0.1}, {kind = "n2g", size = 4}]
[[model.network.branch]]
input = "propagated"
layers = [{kind = "graph_conv", size = 3}, {kind = "n2g", size = 2}]
`, []string{"momentum = 0.9", "step_epochs = 30", "factor = 0.1", "channels = 8", "rate = 0.1", "size = 3",
			"operator = 'renormalized-adjacency'", "propagate = 'both'"},
			[]string{"beta1", "epsilon", "min_rate", "delta", "head_dropout", "size = 0", "channels = 0", "rate = 0.0\n"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			base := applicableBase
			if strings.Contains(tt.name, "groups") {
				base = strings.Replace(base, "[cohort]\n", "[cohort]\ngroup = \"family\"\n", 1)
			}
			exp, err := ParseExperiment([]byte(base + tt.text))
			if err != nil {
				t.Fatal(err)
			}
			shown, err := exp.MarshalApplicable()
			if err != nil {
				t.Fatal(err)
			}
			text := string(shown)
			for _, w := range tt.want {
				if !strings.Contains(text, w) {
					t.Errorf("lacks %q:\n%s", w, text)
				}
			}
			for _, g := range tt.gone {
				if strings.Contains(text, g) {
					t.Errorf("still has %q:\n%s", g, text)
				}
			}
			back, err := ParseExperiment(shown)
			if err != nil {
				t.Fatalf("does not read back: %v\n%s", err, text)
			}
			a, _ := toml.Marshal(exp)
			b, _ := toml.Marshal(back)
			if string(a) != string(b) {
				t.Errorf("reads back as another experiment:\n%s\nwant\n%s", b, a)
			}
		})
	}
}
