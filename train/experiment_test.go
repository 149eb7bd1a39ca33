package train

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
		{"model without kind", "[[model]]\nname = \"a\"\n", `no baseline table`},
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
