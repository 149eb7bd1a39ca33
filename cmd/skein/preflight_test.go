package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data/synth"
)

// TestCheckAndRunRefuseTheSame: every experiment that skein run refuses
// before training is refused by skein check too, with exit code 2, the
// same problems, all of them at once, and no run folder (or work folder)
// left behind. The cohort: 20 invented participants in families of two
// (10 groups).
func TestCheckAndRunRefuseTheSame(t *testing.T) {
	t.Parallel()
	ridge := "[[model]]\nname = \"ridge\"\n[model.ridge]\n"
	net := "[[model]]\nname = \"net\"\n[model.network]\nepochs = 2\nbatch_size = 1000000000\n" +
		"[[model.network.branch]]\ninput = \"functional\"\nlayers = [{kind = \"e2n\", channels = 2}, {kind = \"n2g\", size = 2}]\n"
	for _, tc := range []struct {
		name  string
		extra string
		want  []string // every one must appear, in one message
	}{
		{"folds against groups", "[cv]\nfolds = 11\n" + meanModel,
			[]string{"cv.folds: 11 folds, but the cohort has only 10 groups (cohort.group): use at most 10"}},
		{"inner validation as large as the training fold", "[cv]\nfolds = 2\ninner_validation = 10\n" + meanModel,
			[]string{"cv.inner_validation: 10 takes 10 of the 10 participants of the training fold", "leaving 0 to train on; want at least 2"}},
		{"inner folds and columns at once", "[cv]\nfolds = 5\nstratify = \"memory\"\nconfounds = [\"iq\"]\n" +
			"[[model]]\nname = \"ridge\"\n[model.ridge]\ninner_folds = 9\n",
			[]string{"3 problems:", `cv.stratify: "memory" is not a target`, `cv.confounds: "iq" is not a covariate`,
				`model "ridge": model.ridge.inner_folds: 9, but the training fold of repeat 1, fold 1 holds only 8 groups (cohort.group)`}},
		{"model names", "[[model]]\nname = \".\"\n[model.mean]\n[[model]]\nname = \"..\"\n[model.mean]\n" +
			"[[model]]\nname = \"a/b\"\n[model.mean]\n[[model]]\nname = \"c:d\"\n[model.mean]\n[[model]]\nname = \"C_d\"\n[model.mean]\n",
			[]string{"4 problems:", `model[0]: name "." cannot name a folder`, `model[1]: name ".." cannot name a folder`,
				`model[2]: name "a/b" holds a path separator`, `model[4]: name "C_d" and model "c:d" would share the folder "C_d"`}},
		{"permutations beyond the bound", "[permutation]\ncount = 1000000000000\n" + ridge,
			[]string{"permutation.count: at most 100000, found 1000000000000"}},
		{"a wrong type in words", "[cv]\nfolds = \"5\"\n" + ridge,
			[]string{`key "cv.folds": want a whole number, found text`}},
		{"sweep variants sharing a folder", "[[model]]\nname = \"r\"\n[model.ridge]\n[[model]]\nname = \"R[alphas=[1]]\"\n[model.mean]\n" +
			"[[sweep]]\nmodel = \"r\"\nkey = \"ridge.alphas\"\nvalues = [[1.0], [2.0]]\n",
			[]string{`expanding the sweeps: model[2]: name "R[alphas=[1]]" and model "r[alphas=[1]]" would share the folder`}},
		{"a sample-size subset too small to train on", "[cv]\nfolds = 2\n[sample_size]\nfractions = [0.1, 1.0]\n" + ridge,
			[]string{`sample_size.fractions: 0.1: model "ridge": model.ridge.inner_folds: 5, but the training fold of repeat 1, fold 1 holds only 1 groups (cohort.group)`}},
		{"fine, with batch_size beyond the cohort", "[cv]\nfolds = 2\n" + net, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			exp := writeExperiment(t, synth.Config{N: 20, P: 8, Seed: 5, FamilySize: 2}, "\n"+tc.extra)
			out := filepath.Join(t.TempDir(), "run")
			checkCode, _, checkErr := runSkein(t, "check", exp)
			runCode, _, runErr := runSkein(t, "run", exp, "--out", out, "--no-history")
			if tc.want == nil {
				if checkCode != exitOK || runCode != exitOK {
					t.Fatalf("check: exit %d, %s\nrun: exit %d, %s", checkCode, checkErr, runCode, runErr)
				}
				return
			}
			for _, c := range []struct {
				cmd    string
				code   int
				stderr string
			}{{"check", checkCode, checkErr}, {"run", runCode, runErr}} {
				if c.code != exitBadInput {
					t.Errorf("%s: exit %d, want %d; stderr %q", c.cmd, c.code, exitBadInput, c.stderr)
				}
				for _, w := range tc.want {
					if !strings.Contains(c.stderr, w) {
						t.Errorf("%s: stderr %q\nlacks %q", c.cmd, c.stderr, w)
					}
				}
				if strings.Contains(c.stderr, "goroutine") || strings.Contains(c.stderr, "train.") || strings.Contains(c.stderr, "struct field") {
					t.Errorf("%s: stderr shows Go internals: %q", c.cmd, c.stderr)
				}
			}
			for _, dir := range []string{out, out + ".partial"} {
				if _, err := os.Stat(dir); err == nil {
					t.Errorf("a refused run left %s", dir)
				}
			}
		})
	}
}

// TestCheckListsFileAndCohortProblemsTogether: skein check reports the
// experiment file's problems and the cohort files' problems in one
// attempt.
func TestCheckListsFileAndCohortProblemsTogether(t *testing.T) {
	t.Parallel()
	exp := writeExperiment(t, synth.Config{N: 20, P: 8, Seed: 5}, "\n[permutation]\ncount = 200000\n"+
		"[[model]]\nname = \"..\"\n[model.mean]\n")
	matrix := filepath.Join(filepath.Dir(exp), "fc", "sub-004_fc.tsv")
	if err := os.Remove(matrix); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink("gone.tsv", matrix); err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runSkein(t, "check", exp)
	for _, want := range []string{"3 problems:", "permutation.count: at most 100000", `name ".." cannot name a folder`,
		`sub-004_fc.tsv: a symbolic link to "gone.tsv", which does not exist`} {
		if !strings.Contains(stderr, want) {
			t.Errorf("stderr %q\nlacks %q", stderr, want)
		}
	}
	if code != exitBadInput {
		t.Errorf("exit %d, want %d", code, exitBadInput)
	}
}
