package main

import (
	"bytes"
	"context"
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data"
)

// runCheck runs "skein check ARGS" as main does and returns the exit code
// and what was written.
func runCheck(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var stdout, stderr bytes.Buffer
	code := run(context.Background(), append([]string{"check"}, args...), commandIO{&stdout, &stderr})
	return code, stdout.String(), stderr.String()
}

// cohortFixture is the experiment file of a cohort made by
// testdata/cohort/make_cohorts.py.
func cohortFixture(name string) string {
	return filepath.Join("..", "..", "testdata", "cohort", name, "experiment.toml")
}

func TestCheckGoodCohorts(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name string
		want []string // lines of the summary, in order
	}{
		{"good-tsv", []string{
			"(10 rows)",
			"included: 7 participants",
			"excluded: 3 participants",
			"  sub-06: no value in any target column (recall, fluency)",
			"  sub-08: no functional file ",
			"  sub-10: no value in group column \"family\"",
			"kept with some scores missing: 1 participant",
			"regions: 4 (labels: ",
			"functional (fc/{participant_id}_fc.tsv):",
			"  mean connectivity mean ",
			"structural (sc/{participant_id}_sc.npy):",
			"  density mean ",
			"  recall: mean 12.14",
			"  fluency: ",
			"  sex: text, coded \"F\" = 0, \"M\" = 1",
			"groups (family): 5, of 1 to 2 participants",
			"outliers (more than 3 robust SD from the median; flagged, not excluded): 1",
			"  sub-09: functional mean connectivity 0.9",
			"research software, not a diagnostic device",
		}},
		{"good-npy", []string{
			"included: 9 participants",
			"excluded: 1 participant",
			"regions: 4 (labels: default)",
			"functional (fc.npy):",
			"structural (sc.npy):",
			"research software, not a diagnostic device",
		}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, stdout, stderr := runCheck(t, cohortFixture(tc.name))
			if code != exitOK || stderr != "" {
				t.Fatalf("exit %d, stderr %q", code, stderr)
			}
			rest := stdout
			for _, w := range tc.want {
				i := strings.Index(rest, w)
				if i < 0 {
					t.Fatalf("summary lacks %q after the earlier lines:\n%s", w, stdout)
				}
				rest = rest[i+len(w):]
			}
		})
	}
}

func TestCheckJSON(t *testing.T) {
	t.Parallel()
	for _, args := range [][]string{
		{"--json", cohortFixture("good-tsv")},
		{cohortFixture("good-tsv"), "-json"},
	} {
		code, stdout, stderr := runCheck(t, args...)
		if code != exitOK {
			t.Fatalf("%v: exit %d, stderr %q", args, code, stderr)
		}
		var rep struct {
			Included int `json:"included"`
			Excluded []struct {
				ID     string `json:"participant_id"`
				Reason string `json:"reason"`
			} `json:"excluded"`
			Regions    int `json:"regions"`
			Covariates []struct {
				Name   string   `json:"name"`
				Levels []string `json:"levels"`
			} `json:"covariates"`
			Outliers []struct {
				ID string `json:"participant_id"`
			} `json:"outliers"`
			Notice string `json:"notice"`
		}
		if err := json.Unmarshal([]byte(stdout), &rep); err != nil {
			t.Fatalf("%v: output is not JSON: %v\n%s", args, err, stdout)
		}
		if rep.Included != 7 || len(rep.Excluded) != 3 || rep.Excluded[1].ID != "sub-08" || rep.Regions != 4 ||
			rep.Covariates[1].Name != "sex" || strings.Join(rep.Covariates[1].Levels, ",") != "F,M" ||
			len(rep.Outliers) != 1 || rep.Outliers[0].ID != "sub-09" ||
			rep.Notice != data.Notice {
			t.Errorf("%v: report %+v", args, rep)
		}
	}
}

// TestCheckBadInput: every broken fixture exits with code 2 and a message
// naming the file and the place.
func TestCheckBadInput(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct{ dir, want string }{
		{"bad-table-extension", `experiment.toml: cohort.participants: "participants.xlsx" must end in .tsv or .csv, found ".xlsx"`},
		{"bad-files-and-stack", `experiment.toml: cohort.functional: set either "files" or "stack", not both`},
		{"bad-score-not-number", `participants.tsv: line 5, column 2 ("recall"): value "nine" is not a number`},
		{"bad-duplicate-id", `participants.tsv: line 8, column 1 ("participant_id"): participant_id "sub-02" is already on line 3`},
		{"bad-missing-column", `participants.tsv: line 1: no column "naming" (named in cohort.targets)`},
		{"bad-mixed-covariate", `participants.tsv: line 5, column 4 ("age"): value "forty" is not a number`},
		{"bad-ragged-table", "participants.tsv: line 5: found 6 fields, expected 7"},
		{"bad-not-square", "fc/sub-05_fc.tsv: matrix is 4 × 3; expected a square p × p matrix"},
		{"bad-p-mismatch", "fc/sub-05_fc.tsv: matrix is 3 × 3, expected 4 × 4"},
		{"bad-p-mismatch-modalities", "sc/sub-01_sc.npy: matrix is 5 × 5, expected 4 × 4"},
		{"bad-labels-mismatch", `fc/sub-01_fc.tsv: region label 4 is "temporal_b", but`},
		{"bad-asymmetric", "fc/sub-04_fc.tsv: line 3, column 5: not symmetric: entry (2, 4) is 0.187004 but entry (4, 2) is -0.012996"},
		{"bad-nonfinite", "fc/sub-04_fc.tsv: line 3, column 4: entry (2, 3) is NaN; expected a finite number"},
		{"bad-fc-range", "fc/sub-04_fc.tsv: line 2, column 5: entry (1, 4) is 1.5, outside [-1, 1]"},
		{"bad-sc-negative", "sc/sub-02_sc.npy: entry (2, 3) is -3; structural values must be non-negative"},
		{"bad-matrix-not-number", `fc/sub-03_fc.tsv: line 4, column 2: value "abc" is not a number`},
		{"bad-npy-dtype", `sc/sub-02_sc.npy: dtype "<i8" is not supported; expected float32 or float64`},
		{"bad-npy-dims", "sc/sub-02_sc.npy: array has 3 dimensions (shape [2 4 4]); expected a 2-D p × p matrix"},
		{"bad-unlisted-file", `fc/sub-99_fc.tsv: file matches cohort.functional.files "fc/{participant_id}_fc.tsv" but participant_id "sub-99" has no row in`},
		{"bad-unlisted-stack", `fc_ids.txt: line 11: participant_id "sub-42" has a matrix in`},
		{"bad-stack-count", "fc.npy: stack holds 9 matrices (shape [9 4 4]) but"},
		{"bad-too-few", "only 7 participants left after 3 exclusions; cohort.min_participants is 8"},
	} {
		t.Run(tc.dir, func(t *testing.T) {
			code, _, stderr := runCheck(t, cohortFixture(tc.dir))
			if code != exitBadInput {
				t.Errorf("exit %d, want %d", code, exitBadInput)
			}
			if !strings.HasPrefix(stderr, "skein check: ") || !strings.Contains(stderr, tc.want) {
				t.Errorf("stderr %q, want it to hold %q", stderr, tc.want)
			}
		})
	}
}

func TestCheckTooFewStillPrintsTheSummary(t *testing.T) {
	t.Parallel()
	code, stdout, _ := runCheck(t, cohortFixture("bad-too-few"))
	if code != exitBadInput || !strings.Contains(stdout, "included: 7 participants") || !strings.Contains(stdout, "not a diagnostic device") {
		t.Errorf("exit %d, stdout %q", code, stdout)
	}
}

func TestCheckUsage(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		args []string
		code int
		want string
	}{
		{nil, exitBadInput, "want one experiment file, got 0 arguments"},
		{[]string{"a.toml", "b.toml"}, exitBadInput, "want one experiment file, got 2 arguments"},
		{[]string{"--verbose", "a.toml"}, exitBadInput, "flag provided but not defined: -verbose"},
		{[]string{"no-such-experiment.toml"}, exitBadInput, "no-such-experiment.toml"},
		{[]string{"-h"}, exitOK, "usage: skein check EXPERIMENT.toml [--json]"},
		{[]string{"--", "--json"}, exitBadInput, "--json: no such file"},
	} {
		code, _, stderr := runCheck(t, tc.args...)
		if code != tc.code || !strings.Contains(stderr, tc.want) {
			t.Errorf("%q: exit %d, stderr %q; want %d and %q", tc.args, code, stderr, tc.code, tc.want)
		}
	}
}
