package experiment

import (
	"fmt"
	"strings"
	"testing"
)

// oneNetwork is a [[model]] network table whose keys a test sets; %s is
// replaced by the test's lines.
const oneNetwork = `[[model]]
name = "net"
[model.network]
[[model.network.branch]]
layers = [{kind = "e2n", channels = 2}, {kind = "n2g", size = 2}]
`

// TestWordKeys: every word-valued key of the experiment file reads each of
// its words, and a word it does not know is an error naming the line,
// column and key and listing the words (those examples/reference.toml
// documents).
func TestWordKeys(t *testing.T) {
	tests := []struct {
		key   string
		text  string // %s is the value
		words []string
		get   func(*Experiment) string // the value read
		// needs holds, for words that need more keys of the table, the
		// text written after the word.
		needs map[string]string
	}{
		{"cohort.unlisted", "[cohort]\nparticipants = \"p.tsv\"\ntargets = [\"score\"]\nunlisted = %s\n[cohort.functional]\nfiles = \"fc/{participant_id}.tsv\"\n",
			[]string{"error", "report"}, func(e *Experiment) string { return string(e.Cohort.Unlisted) }, nil},
		{"cohort.functional.values", "[cohort]\nparticipants = \"p.tsv\"\ntargets = [\"score\"]\n[cohort.functional]\nfiles = \"fc/{participant_id}.tsv\"\nvalues = %s\n",
			[]string{"correlation", "any"}, func(e *Experiment) string { return string(e.Cohort.Functional.Values) }, nil},
		{"preprocess.functional.transform", "[preprocess.functional]\ntransform = %s\n",
			[]string{"fisher-z", "none"}, func(e *Experiment) string { return string(e.Preprocess.FC.Transform) }, nil},
		{"preprocess.functional.diagonal", "[preprocess.functional]\ndiagonal = %s\n",
			[]string{"zero", "keep"}, func(e *Experiment) string { return string(e.Preprocess.FC.Diagonal) }, nil},
		{"preprocess.structural.transform", "[preprocess.structural]\ntransform = %s\n",
			[]string{"log1p", "none"}, func(e *Experiment) string { return string(e.Preprocess.SC.Transform) }, nil},
		{"preprocess.structural.scale", "[preprocess.structural]\nscale = %s\n",
			[]string{"max", "total", "none"}, func(e *Experiment) string { return string(e.Preprocess.SC.Scale) }, nil},
		{"permutation.blocks", "[permutation]\nblocks = %s\n",
			[]string{"auto", "within", "whole"}, func(e *Experiment) string { return string(e.Permutation.Blocks) }, nil},
		{"drift.p_metric", "[drift]\np_metric = %s\n",
			[]string{"pearson_r_within", "pearson_r", "spearman_rho", "mae", "median_ae", "rmse", "r2", "nmi", "ami"},
			func(e *Experiment) string { return string(e.Drift.PMetric) }, nil},
		{"model.ridge.input", "[[model]]\nname = \"m\"\n[model.ridge]\ninput = %s\n",
			[]string{"functional", "structural", "both"}, func(e *Experiment) string { return string(e.Models[0].Ridge.Input) }, nil},
		{"model.ridge.standardize", "[[model]]\nname = \"m\"\n[model.ridge]\nstandardize = %s\n",
			[]string{"zscore", "center"}, func(e *Experiment) string { return string(e.Models[0].Ridge.Standardize) }, nil},
		{"model.ridge.alpha_scale", "[[model]]\nname = \"m\"\n[model.ridge]\nalphas = [1.0]\nalpha_scale = %s\n",
			[]string{"relative", "absolute"}, func(e *Experiment) string { return string(e.Models[0].Ridge.AlphaScale) }, nil},
		{"model.kernel_ridge.input", "[[model]]\nname = \"m\"\n[model.kernel_ridge]\ninput = %s\n",
			[]string{"functional", "structural", "both"}, func(e *Experiment) string { return string(e.Models[0].KernelRidge.Input) }, nil},
		{"model.kernel_ridge.kernel", "[[model]]\nname = \"m\"\n[model.kernel_ridge]\nkernel = %s\n",
			[]string{"correlation", "linear"}, func(e *Experiment) string { return string(e.Models[0].KernelRidge.Kernel) }, nil},
		{"model.kernel_ridge.alpha_scale", "[[model]]\nname = \"m\"\n[model.kernel_ridge]\nalphas = [1.0]\nalpha_scale = %s\n",
			[]string{"relative", "absolute"}, func(e *Experiment) string { return string(e.Models[0].KernelRidge.AlphaScale) }, nil},
		{"model.logistic.input", "[[model]]\nname = \"m\"\n[model.logistic]\ninput = %s\n",
			[]string{"functional", "structural", "both"}, func(e *Experiment) string { return string(e.Models[0].Logistic.Input) }, nil},
		{"model.logistic.standardize", "[[model]]\nname = \"m\"\n[model.logistic]\nstandardize = %s\n",
			[]string{"zscore", "center"}, func(e *Experiment) string { return string(e.Models[0].Logistic.Standardize) }, nil},
		{"model.logistic.class_weight", "[[model]]\nname = \"m\"\n[model.logistic]\nclass_weight = %s\n",
			[]string{"none", "balanced"}, func(e *Experiment) string { return string(e.Models[0].Logistic.ClassWeight) }, nil},
		{"model.kernel_logistic.kernel", "[[model]]\nname = \"m\"\n[model.kernel_logistic]\nkernel = %s\n",
			[]string{"correlation", "linear"}, func(e *Experiment) string { return string(e.Models[0].KernelLogistic.Kernel) }, nil},
		{"model.kernel_logistic.class_weight", "[[model]]\nname = \"m\"\n[model.kernel_logistic]\nclass_weight = %s\n",
			[]string{"none", "balanced"}, func(e *Experiment) string { return string(e.Models[0].KernelLogistic.ClassWeight) }, nil},
		{"model.cpm.input", "[[model]]\nname = \"m\"\n[model.cpm]\ninput = %s\n",
			[]string{"functional", "structural", "both"}, func(e *Experiment) string { return string(e.Models[0].CPM.Input) }, nil},
		{"model.cpm.correlation", "[[model]]\nname = \"m\"\n[model.cpm]\ncorrelation = %s\n",
			[]string{"pearson", "spearman"}, func(e *Experiment) string { return string(e.Models[0].CPM.Correlation) }, nil},
		{"model.cpm.network", "[[model]]\nname = \"m\"\n[model.cpm]\nnetwork = %s\n",
			[]string{"positive", "negative", "both"}, func(e *Experiment) string { return string(e.Models[0].CPM.Network) }, nil},
		{"model.network.merge", "[[model]]\nname = \"net\"\n[model.network]\nmerge = %s\n[[model.network.branch]]\nlayers = [{kind = \"n2g\", size = 2}]\n",
			[]string{"concat", "product"}, func(e *Experiment) string { return string(e.Models[0].Network.Merge) }, nil},
		{"model.network.init", "[[model]]\nname = \"net\"\n[model.network]\ninit = %s\n[[model.network.branch]]\nlayers = [{kind = \"n2g\", size = 2}]\n",
			[]string{"he", "glorot"}, func(e *Experiment) string { return string(e.Models[0].Network.Init) }, nil},
		{"model.network.dtype", "[[model]]\nname = \"net\"\n[model.network]\ndtype = %s\n[[model.network.branch]]\nlayers = [{kind = \"n2g\", size = 2}]\n",
			[]string{"float32", "float64"}, func(e *Experiment) string { return string(e.Models[0].Network.DType) }, nil},
		{"model.network.class_weight", "[[model]]\nname = \"net\"\n[model.network]\nclass_weight = %s\n[[model.network.branch]]\nlayers = [{kind = \"n2g\", size = 2}]\n",
			[]string{"none", "balanced"}, func(e *Experiment) string { return string(e.Models[0].Network.ClassWeight) }, nil},
		{"model.network.branch.input", "[[model]]\nname = \"net\"\n[model.network]\n[[model.network.branch]]\ninput = %s\nlayers = [{kind = \"n2g\", size = 2}]\n",
			[]string{"functional", "structural", "propagated", "product"}, func(e *Experiment) string { return string(e.Models[0].Network.Branches[0].Input) }, nil},
		{"model.network.branch.views", "[[model]]\nname = \"net\"\n[model.network]\n[[model.network.branch]]\nviews = [%s]\nlayers = [{kind = \"n2g\", size = 2}]\n",
			[]string{"functional", "structural", "propagated", "product"}, func(e *Experiment) string { return string(e.Models[0].Network.Branches[0].Views[0]) }, nil},
		{"model.network.branch.operator", "[[model]]\nname = \"net\"\n[model.network]\n[[model.network.branch]]\ninput = \"propagated\"\noperator = %s\nlayers = [{kind = \"n2g\", size = 2}]\n",
			[]string{"identity", "laplacian", "normalized-laplacian", "renormalized-adjacency", "scaled-laplacian"},
			func(e *Experiment) string { return string(e.Models[0].Network.Branches[0].Operator) }, nil},
		{"model.network.branch.propagate", "[[model]]\nname = \"net\"\n[model.network]\n[[model.network.branch]]\ninput = \"propagated\"\npropagate = %s\nlayers = [{kind = \"n2g\", size = 2}]\n",
			[]string{"left", "both"}, func(e *Experiment) string { return string(e.Models[0].Network.Branches[0].Propagate) }, nil},
		{"model.network.branch.layers.kind", "[[model]]\nname = \"net\"\n[model.network]\n[[model.network.branch]]\nlayers = [{kind = \"e2e\", channels = 1}, {kind = %s}]\n",
			[]string{"e2e", "e2n", "edge", "graph_conv", "n2g", "dropout"}, func(e *Experiment) string { return string(e.Models[0].Network.Branches[0].Layers[1].Kind) },
			map[string]string{"e2e": ", channels = 1", "e2n": ", channels = 1", "edge": ", size = 1", "graph_conv": ", size = 1", "n2g": ", size = 1", "dropout": ", rate = 0.1"}},
		{"model.network.branch.layers.activation", "[[model]]\nname = \"net\"\n[model.network]\n[[model.network.branch]]\nlayers = [{kind = \"n2g\", size = 2, activation = %s}]\n",
			[]string{"leaky_relu", "none"}, func(e *Experiment) string { return string(e.Models[0].Network.Branches[0].Layers[0].Activation) }, nil},
		{"model.network.optimizer.kind", oneNetwork + "[model.network.optimizer]\nkind = %s\n",
			[]string{"adamw", "sgd"}, func(e *Experiment) string { return string(e.Models[0].Network.Optimizer.Kind) }, nil},
		{"model.network.optimizer.schedule", oneNetwork + "[model.network.optimizer]\nschedule = %s\n",
			[]string{"constant", "step", "cosine"}, func(e *Experiment) string { return string(e.Models[0].Network.Optimizer.Schedule) }, nil},
	}
	for _, tt := range tests {
		t.Run(tt.key, func(t *testing.T) {
			parse := func(value string) (*Experiment, error) {
				text := fmt.Sprintf(tt.text, value)
				if !strings.HasPrefix(text, "[cohort]") {
					text += minimalCohort
				}
				return ParseExperiment([]byte(text))
			}
			for _, w := range tt.words {
				exp, err := parse(`"` + w + `"` + tt.needs[w])
				if err != nil {
					t.Fatalf("%s = %q: %v", tt.key, w, err)
				}
				if got := tt.get(exp); got != w {
					t.Errorf("%s = %q read as %q", tt.key, w, got)
				}
			}
			// The line and column of the value, counted from the text.
			at := strings.Index(tt.text, "%s")
			line := strings.Count(tt.text[:at], "\n") + 1
			column := at - strings.LastIndex(tt.text[:at], "\n")
			quoted := make([]string, len(tt.words))
			for i, w := range tt.words {
				quoted[i] = `"` + w + `"`
			}
			allowed := strings.Join(quoted[:len(quoted)-1], ", ") + " or " + quoted[len(quoted)-1]
			for _, bad := range []struct{ value, found string }{
				{`"nope"`, `"nope"`},
				{`"` + strings.ToUpper(tt.words[0]) + `"`, `"` + strings.ToUpper(tt.words[0]) + `"`}, // words are lower case
				{"3", `"3"`}, // a number is not a word
			} {
				_, err := parse(bad.value)
				want := fmt.Sprintf("line %d, column %d: key %q: want %s, found %s", line, column, tt.key, allowed, bad.found)
				if err == nil || err.Error() != want {
					t.Errorf("%s = %s: error\n%v\nwant\n%s", tt.key, bad.value, err, want)
				}
			}
		})
	}
}

// TestWordKeysInExpandedSweeps: a sweep over a word-valued key gives each
// variant its word, and a word the key does not know is an error naming
// the key.
func TestWordKeysInExpandedSweeps(t *testing.T) {
	const ridge = "[[model]]\nname = \"kr\"\n[model.kernel_ridge]\n[[sweep]]\nmodel = \"kr\"\nkey = \"kernel_ridge.kernel\"\n"
	exp, err := ParseExperiment([]byte(ridge + "values = [\"linear\", \"correlation\"]\n" + minimalCohort))
	if err != nil {
		t.Fatal(err)
	}
	expanded, _, err := exp.Expand()
	if err != nil {
		t.Fatal(err)
	}
	if k0, k1 := expanded.Models[0].KernelRidge.Kernel, expanded.Models[1].KernelRidge.Kernel; k0 != "linear" || k1 != "correlation" {
		t.Errorf("variant kernels %q and %q", k0, k1)
	}
	exp, err = ParseExperiment([]byte(ridge + "values = [\"linear\", \"rbf\"]\n" + minimalCohort))
	if err != nil {
		t.Fatal(err)
	}
	_, _, err = exp.Expand()
	want := `model.kernel_ridge.kernel: want "correlation" or "linear", found "rbf"`
	if err == nil || !strings.Contains(err.Error(), want) {
		t.Errorf("error %v, want one containing %s", err, want)
	}
}

// TestWordKeyNotAString: a word-valued key given an array, a table, a
// boolean or a date is an error naming its line and key.
func TestWordKeyNotAString(t *testing.T) {
	const allowed = `"auto", "within" or "whole"`
	tests := []struct{ value, want string }{
		{`["auto"]`, `line 2, column 1: key "permutation.blocks": want a word in quotes, found an array`},
		{`{within = 1}`, `line 2, column 10: key "permutation.blocks": want a word in quotes, found a table`},
		{`true`, `line 2, column 10: key "permutation.blocks": want ` + allowed + `, found "true"`},
		{`1979-05-27`, `line 2, column 10: key "permutation.blocks": want ` + allowed + `, found "1979-05-27"`},
		{`'''whole'''`, ``}, // any form of TOML string
		{`"\u0077hole"`, ``},
	}
	for _, tt := range tests {
		_, err := ParseExperiment([]byte("[permutation]\nblocks = " + tt.value + "\n" + minimalCohort))
		if (tt.want == "" && err != nil) || (tt.want != "" && (err == nil || err.Error() != tt.want)) {
			t.Errorf("blocks = %s: error %v, want %q", tt.value, err, tt.want)
		}
	}
}
