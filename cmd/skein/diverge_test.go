package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data/synth"
)

// TestRunDivergedExitCode: a learning rate far too large makes the loss
// explode; the run fails with exit code 3 naming the model, fold and
// epoch, and leaves no run folder behind.
func TestRunDivergedExitCode(t *testing.T) {
	t.Parallel()
	exp := synthExperiment(t, synth.Config{N: 30, P: 8, Seed: 7}, `
[[model]]
name = "wild"
[model.network]
epochs = 50
patience = 0
[model.network.optimizer]
kind = "sgd"
rate = 1e4
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2n", channels = 4}, {kind = "n2g", size = 4}]
`)
	out := filepath.Join(t.TempDir(), "run")
	code, _, stderr := runSkein(t, "run", exp, "--out", out, "--jobs", "1")
	if code != exitTraining {
		t.Fatalf("exit %d, want %d: %s", code, exitTraining, stderr)
	}
	for _, want := range []string{`model "wild"`, "repeat 1", "fold", "epoch"} {
		if !strings.Contains(stderr, want) {
			t.Errorf("message %q lacks %q", stderr, want)
		}
	}
	if _, err := os.Stat(out); err == nil {
		t.Error("a failed run left a run folder")
	}
}
