package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data/synth"
)

// writeExperiment writes the synthetic cohort cfg as a lab's files and
// appends extra to its experiment file, whose path it returns.
func writeExperiment(t *testing.T, cfg synth.Config, extra string) string {
	t.Helper()
	c, err := synth.Generate(cfg)
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "cohort")
	if err := synth.Write(dir, c, "tsv"); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "experiment.toml")
	f, err := os.OpenFile(path, os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if _, err := f.WriteString(extra); err != nil {
		t.Fatal(err)
	}
	return path
}

// synthExperiment writes a small synthetic cohort and an experiment file
// running the given [[model]] tables on it under 4-fold × 2
// cross-validation, and returns the file's path.
func synthExperiment(t *testing.T, cfg synth.Config, models string) string {
	t.Helper()
	return writeExperiment(t, cfg, "\n[cv]\nfolds = 4\nrepeats = 2\n\n"+models)
}

const meanModel = "[[model]]\nname = \"mean\"\n[model.mean]\n"

// runSkein runs "skein ARGS" in the test's process, as main does, and
// returns the exit code and what was written. The tests of this package
// write only into their own t.TempDir folders and so run in parallel
// (t.Parallel); a test that changes what the whole process shares
// (environment variables, working directory, os.Stdout) must not.
func runSkein(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var out, errOut bytes.Buffer
	code = run(context.Background(), args, commandIO{&out, &errOut})
	return code, out.String(), errOut.String()
}

func TestRunDeterministicAcrossJobs(t *testing.T) {
	t.Parallel()
	exp := synthExperiment(t, synth.Config{N: 40, P: 8, Seed: 3, FamilySize: 2},
		meanModel+"[[model]]\nname = \"ridge\"\n[model.ridge]\ninput = \"both\"\n")
	var predictions [2][]byte
	for j, jobs := range []string{"1", "2"} {
		out := filepath.Join(t.TempDir(), "run")
		if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--jobs", jobs); code != exitOK {
			t.Fatalf("--jobs %s: exit %d: %s", jobs, code, stderr)
		}
		raw, err := os.ReadFile(filepath.Join(out, "predictions.csv"))
		if err != nil {
			t.Fatal(err)
		}
		predictions[j] = raw
		for _, name := range []string{"metrics.json", "summary.md", "experiment.toml", "run.log", "versions.txt"} {
			if _, err := os.Stat(filepath.Join(out, name)); err != nil {
				t.Errorf("run folder lacks %s", name)
			}
		}
	}
	if !bytes.Equal(predictions[0], predictions[1]) {
		t.Fatal("--jobs 1 and --jobs 2 wrote different predictions.csv")
	}
	if !strings.HasPrefix(string(predictions[0]), "participant_id,model,target,repeat,fold,observed,predicted\n") {
		t.Fatalf("predictions.csv starts %q", string(predictions[0][:60]))
	}
}

func TestRunBadInputKeepsEarlierResults(t *testing.T) {
	t.Parallel()
	exp := synthExperiment(t, synth.Config{N: 30, P: 8, Seed: 4}, meanModel)
	out := filepath.Join(t.TempDir(), "run")
	if code, _, stderr := runSkein(t, "run", exp, "--out", out); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	before, _ := os.ReadFile(filepath.Join(out, "predictions.csv"))

	code, _, stderr := runSkein(t, "run", exp, "--out", out)
	if code != exitBadInput || !strings.Contains(stderr, "--force") {
		t.Errorf("rerun into an existing folder: exit %d, %q; want %d and a hint at --force", code, stderr, exitBadInput)
	}
	broken := filepath.Join(filepath.Dir(exp), "broken.toml")
	raw, _ := os.ReadFile(exp)
	os.WriteFile(broken, append(raw, "\n[cv2]\nfolds = 3\n"...), 0o644)
	code, _, stderr = runSkein(t, "run", broken, "--out", out, "--force")
	if code != exitBadInput || !strings.Contains(stderr, `unknown key "cv2`) || !strings.Contains(stderr, "broken.toml") {
		t.Errorf("unknown key: exit %d, %q", code, stderr)
	}
	after, _ := os.ReadFile(filepath.Join(out, "predictions.csv"))
	if !bytes.Equal(before, after) {
		t.Error("a failed run changed the earlier results")
	}
}
