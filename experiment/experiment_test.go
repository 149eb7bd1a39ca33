package experiment

import (
	"strings"
	"testing"
)

// minimalCohort is a [cohort] table that passes validation, appended to
// experiment texts whose other parts a test is about.
const minimalCohort = `
[cohort]
participants = "participants.tsv"
targets = ["score"]
[cohort.functional]
files = "fc/{participant_id}.tsv"
`

func TestParseExperimentErrors(t *testing.T) {
	tests := []struct {
		name, text, want string
	}{
		{"unknown key", "seed = 1\n\n[cv]\nfolds = 5\nfoldz = 3\n", `line 5: unknown key "cv.foldz"`},
		{"wrong type", "seed = \"one\"\n", `key "seed"`},
		{"duplicate model", "[[model]]\nname = \"a\"\n[model.mean]\n[[model]]\nname = \"a\"\n[model.mean]\n", `name "a" is used twice`},
		{"model without name", "[[model]]\n[model.mean]\n", `key "name" is required`},
		{"model without kind", "[[model]]\nname = \"a\"\n", `model "a": no kind table is set; add one of [model.network], [model.mean]`},
		{"two kinds", "[[model]]\nname = \"a\"\n[model.mean]\n[model.ridge]\n", `choose one`},
		{"bad cv", "[cv]\nfolds = 1\n", `cv.folds`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := ParseExperiment([]byte(tt.text + minimalCohort))
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("got error %v, want one containing %q", err, tt.want)
			}
		})
	}
}

// twoModels is a baseline and a network, for the tests of
// comparison.reference.
const twoModels = `
[[model]]
name = "ridge"
[model.ridge]
[[model]]
name = "net"
[model.network]
[[model.network.branch]]
layers = [{kind = "e2n", channels = 2}, {kind = "n2g", size = 2}]
`

func TestComparisonReference(t *testing.T) {
	sweep := "[[sweep]]\nmodel = \"ridge\"\nkey = \"ridge.inner_folds\"\nvalues = [3, 4]\n"
	tests := []struct {
		name, text string
		want       string // the reference read, or the error's text
		fails      bool
	}{
		{"default", "", "", false},
		{"baseline", "[comparison]\nreference = \"ridge\"\n", "ridge", false},
		{"variant of a swept baseline", "[comparison]\nreference = \"ridge[inner_folds=4]\"\n" + sweep, "ridge[inner_folds=4]", false},
		{"no such model", "[comparison]\nreference = \"lasso\"\n", `comparison.reference: no model is named "lasso"`, true},
		{"network", "[comparison]\nreference = \"net\"\n", `comparison.reference: model "net" is a network`, true},
		{"swept model", "[comparison]\nreference = \"ridge\"\n" + sweep, `comparison.reference: model "ridge" is swept into variants; name one of them, such as "ridge[inner_folds=3]"`, true},
		{"variant of nothing", "[comparison]\nreference = \"ridge[]\"\n", `comparison.reference: no model is named "ridge[]"`, true},
		{"wrong type", "[comparison]\nreference = 3\n", `key "comparison.reference"`, true},
		{"unknown key", "[comparison]\nbaseline = \"ridge\"\n", `unknown key "comparison.baseline"`, true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			exp, err := ParseExperiment([]byte(tt.text + twoModels + minimalCohort))
			if tt.fails {
				if err == nil || !strings.Contains(err.Error(), tt.want) {
					t.Fatalf("got error %v, want one containing %q", err, tt.want)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if exp.Comparison.Reference != tt.want {
				t.Fatalf("reference %q, want %q", exp.Comparison.Reference, tt.want)
			}
			// The expanded experiment, a run folder's experiment.toml,
			// still names a model.
			if _, _, err := exp.Expand(); err != nil {
				t.Fatalf("expanding: %v", err)
			}
		})
	}
}
