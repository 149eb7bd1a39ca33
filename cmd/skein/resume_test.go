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

// interruptedRun runs exp to a finished run folder and turns it back into
// the work folder of an interrupted run (every unit checkpointed), which
// is what --resume finds after Ctrl-C late in a run. It returns --out.
func interruptedRun(t *testing.T, exp string) string {
	t.Helper()
	out := filepath.Join(t.TempDir(), "run")
	if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--no-history"); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if err := os.Rename(out, out+".partial"); err != nil {
		t.Fatal(err)
	}
	return out
}

// TestResumeRefusesChangedData: --resume of a work folder whose data or
// experiment changed since the interruption exits 2 naming what changed,
// and leaves the work folder as it was; unchanged, it finishes.
func TestResumeRefusesChangedData(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name string
		edit func(t *testing.T, cohort string)
		want string // "" for a resume that finishes
	}{
		{"unchanged", func(*testing.T, string) {}, ""},
		{"a score in the participants table", func(t *testing.T, cohort string) {
			editFile(t, filepath.Join(cohort, "participants.tsv"), func(s string) string {
				lines := strings.Split(s, "\n")
				cells := strings.Split(lines[3], "\t")
				cells[1] = "99.5"
				lines[3] = strings.Join(cells, "\t")
				return strings.Join(lines, "\n")
			})
		}, "the data changed since its finished units ran, which would mix old and new results: participants.tsv changed; pass --force to start over"},
		{"a functional matrix", func(t *testing.T, cohort string) {
			editFile(t, filepath.Join(cohort, "fc", "sub-007_fc.tsv"), func(s string) string { return s + "\n" })
		}, "fc/sub-007_fc.tsv changed"},
		{"the experiment", func(t *testing.T, cohort string) {
			editFile(t, filepath.Join(cohort, "experiment.toml"), func(s string) string {
				return strings.Replace(s, "folds = 4", "folds = 3", 1)
			})
		}, "the interrupted run used another experiment file; pass --force to start over"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			exp := synthExperiment(t, synth.Config{N: 24, P: 8, Seed: 6}, meanModel)
			out := interruptedRun(t, exp)
			before, _ := os.ReadFile(filepath.Join(out+".partial", "predictions.csv"))
			tc.edit(t, filepath.Dir(exp))
			code, _, stderr := runSkein(t, "run", exp, "--out", out, "--resume", "--no-history")
			if tc.want == "" {
				if code != exitOK {
					t.Fatalf("exit %d: %s", code, stderr)
				}
				return
			}
			if code != exitBadInput || !strings.Contains(stderr, tc.want) {
				t.Errorf("exit %d, stderr %q; want %d and %q", code, stderr, exitBadInput, tc.want)
			}
			after, _ := os.ReadFile(filepath.Join(out+".partial", "predictions.csv"))
			if !bytes.Equal(before, after) {
				t.Error("the refused resume changed the work folder")
			}
			if _, err := os.Stat(out); err == nil {
				t.Error("the refused resume committed a run folder")
			}
		})
	}
}

// editFile rewrites the file at path with edit.
func editFile(t *testing.T, path string, edit func(string) string) {
	t.Helper()
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, []byte(edit(string(raw))), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestRunExitCodesOfLateFailures: a run whose report cannot be written
// keeps its committed results but exits 1; a run stopped by Ctrl-C exits
// 130 saying how to resume, in words (no "context canceled").
func TestRunExitCodesOfLateFailures(t *testing.T) {
	t.Parallel()
	exp := synthExperiment(t, synth.Config{N: 24, P: 8, Seed: 7}, meanModel)

	// A file where the figures folder goes: the report cannot be drawn.
	out := interruptedRun(t, exp)
	figures := filepath.Join(out+".partial", "figures")
	if err := os.RemoveAll(figures); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(figures, []byte("in the way"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, stdout, stderr := runSkein(t, "run", exp, "--out", out, "--resume", "--no-history")
	if code != exitFailure || !strings.Contains(stderr, "the figures and report.html could not be written") ||
		!strings.Contains(stderr, "draw them again with skein report") {
		t.Errorf("report not written: exit %d, stderr %q; want %d", code, stderr, exitFailure)
	}
	if _, err := os.Stat(filepath.Join(out, "predictions.csv")); err != nil || !strings.Contains(stdout, "Results in") {
		t.Errorf("the results were not committed: %v", err)
	}

	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	var outBuf, errBuf bytes.Buffer
	out2 := filepath.Join(t.TempDir(), "run")
	code = run(ctx, []string{"run", exp, "--out", out2, "--no-history"}, commandIO{&outBuf, &errBuf})
	if code != exitInterrupted || !strings.Contains(errBuf.String(), "interrupted; finished units are kept in "+out2+".partial: resume with skein run ") ||
		strings.Contains(errBuf.String(), "context canceled") {
		t.Errorf("Ctrl-C: exit %d, stderr %q", code, errBuf.String())
	}
	code, _, stderr = runSkein(t, "run", exp, "--out", out2, "--resume", "--no-history")
	if code != exitOK {
		t.Errorf("resume after Ctrl-C: exit %d, %s", code, stderr)
	}
}
