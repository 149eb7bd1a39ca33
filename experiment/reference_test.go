package experiment

import (
	"reflect"
	"testing"

	"github.com/pelletier/go-toml/v2"
)

// TestReferenceShowsDefaults: examples/reference.toml writes out every key
// with its default. Resolving it must give the same experiment as
// resolving a file that sets only what has no default (paths, targets, the
// models' kinds and layers).
func TestReferenceShowsDefaults(t *testing.T) {
	full, err := ReadExperiment("../examples/reference.toml")
	if err != nil {
		t.Fatal(err)
	}
	minimal, err := ParseExperiment([]byte(`
[cohort]
participants = "demo/participants.tsv"
targets = ["recall", "fluency"]
covariates = ["age", "sex", "motion"]
group = "family"
regions = "demo/regions.txt"
[cohort.functional]
files = "demo/fc/{participant_id}_fc.tsv"
[cohort.structural]
files = "demo/sc/{participant_id}_sc.tsv"

[[model]]
name = "mean"
[model.mean]
[[model]]
name = "ridge"
[model.ridge]
[[model]]
name = "kernel-ridge"
[model.kernel_ridge]
[[model]]
name = "cpm"
[model.cpm]
[[model]]
name = "majority"
[model.majority]
[[model]]
name = "logistic"
[model.logistic]
[[model]]
name = "kernel-logistic"
[model.kernel_logistic]
[[model]]
name = "network"
[model.network]
head = [32]
[[model.network.branch]]
layers = [{kind = "e2e", channels = 8}, {kind = "e2n", channels = 16}, {kind = "dropout", rate = 0.2}, {kind = "n2g", size = 32}]
[[model.network.branch]]
input = "propagated"
layers = [{kind = "graph_conv", size = 16}, {kind = "n2g", size = 32}]
[[model.network.branch]]
views = ["functional", "structural"]
layers = [{kind = "edge", size = 4}, {kind = "e2n", channels = 8}, {kind = "n2g", size = 32}]
`))
	if err != nil {
		t.Fatal(err)
	}
	minimal.Dir = full.Dir
	if !reflect.DeepEqual(full, minimal) {
		a, _ := toml.Marshal(full)
		b, _ := toml.Marshal(minimal)
		t.Fatalf("examples/reference.toml does not show the defaults.\nreference resolves to:\n%s\ndefaults resolve to:\n%s", a, b)
	}
}
