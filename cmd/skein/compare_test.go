package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data/synth"
)

// nightlyCohort writes a synthetic cohort (planted signal) into a new
// folder and returns the folder.
func nightlyCohort(t *testing.T, cfg synth.Config) string {
	t.Helper()
	c, err := synth.Generate(cfg)
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "cohort")
	if err := synth.Write(dir, c, "tsv"); err != nil {
		t.Fatal(err)
	}
	return dir
}

// experimentFile writes dir/name: the cohort tables synth wrote plus extra.
func experimentFile(t *testing.T, dir, name, extra string) string {
	t.Helper()
	base, err := os.ReadFile(filepath.Join(dir, "experiment.toml"))
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, append(base, "\n"+extra...), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

const ridgeAndMeanModels = "[[model]]\nname = \"mean\"\n[model.mean]\n\n[[model]]\nname = \"ridge\"\n[model.ridge]\n"

// editParticipants rewrites participants.tsv of dir through edit, which
// gets the rows (the header first).
func editParticipants(t *testing.T, dir string, edit func([][]string) [][]string) {
	t.Helper()
	path := filepath.Join(dir, "participants.tsv")
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	r := csv.NewReader(f)
	r.Comma = '\t'
	rows, err := r.ReadAll()
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Comma = '\t'
	w.WriteAll(edit(rows))
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestCompareShowsExactlyTheChanges: two runs of a synthetic cohort, the
// second with one participant removed and one setting changed, differ in
// exactly those.
func TestCompareShowsExactlyTheChanges(t *testing.T) {
	t.Parallel()
	dir := nightlyCohort(t, synth.Config{N: 60, P: 8, Seed: 7})
	root := t.TempDir()
	expA := experimentFile(t, dir, "a.toml", "[cv]\nfolds = 3\n\n"+ridgeAndMeanModels)
	if code, _, stderr := runSkein(t, "run", expA, "--out", filepath.Join(root, "a")); code != exitOK {
		t.Fatalf("run a: exit %d: %s", code, stderr)
	}
	const gone = "sub-010"
	editParticipants(t, dir, func(rows [][]string) [][]string {
		var kept [][]string
		for _, r := range rows {
			if r[0] != gone {
				kept = append(kept, r)
			}
		}
		return kept
	})
	for _, m := range []string{"fc/" + gone + "_fc.tsv", "sc/" + gone + "_sc.tsv"} {
		if err := os.Remove(filepath.Join(dir, m)); err != nil {
			t.Fatal(err)
		}
	}
	expB := experimentFile(t, dir, "b.toml", "[cv]\nfolds = 4\n\n"+ridgeAndMeanModels)
	if code, _, stderr := runSkein(t, "run", expB, "--out", filepath.Join(root, "b")); code != exitOK {
		t.Fatalf("run b: exit %d: %s", code, stderr)
	}

	code, stdout, stderr := runSkein(t, "compare", filepath.Join(root, "a"), filepath.Join(root, "b"), "--json")
	if code != exitOK {
		t.Fatalf("compare --json: exit %d: %s", code, stderr)
	}
	var got struct {
		ParticipantsA int      `json:"participants_a"`
		ParticipantsB int      `json:"participants_b"`
		Added         []string `json:"added"`
		Removed       []string `json:"removed"`
		Settings      []struct {
			Key string  `json:"key"`
			A   *string `json:"a"`
			B   *string `json:"b"`
		} `json:"settings"`
		Versions []any `json:"versions"`
		Metrics  []struct {
			Model, Target, Metric string
			A, B                  *float64
		} `json:"metrics"`
		Note string `json:"note"`
	}
	if err := json.Unmarshal([]byte(stdout), &got); err != nil {
		t.Fatalf("compare --json: %v\n%s", err, stdout)
	}
	if got.ParticipantsA != 60 || got.ParticipantsB != 59 || len(got.Added) != 0 || len(got.Removed) != 1 || got.Removed[0] != gone {
		t.Errorf("participants: %d → %d, added %v, removed %v; want 60 → 59, removed [%s]", got.ParticipantsA, got.ParticipantsB, got.Added, got.Removed, gone)
	}
	if len(got.Settings) != 1 || got.Settings[0].Key != "cv.folds" || *got.Settings[0].A != "3" || *got.Settings[0].B != "4" {
		t.Errorf("settings differences: %+v, want only cv.folds 3 → 4", got.Settings)
	}
	if len(got.Versions) != 0 {
		t.Errorf("versions differ within one test binary: %v", got.Versions)
	}
	if want := 2 * 2 * 9; len(got.Metrics) != want { // models × targets × metrics
		t.Errorf("%d metric rows, want %d", len(got.Metrics), want)
	}
	if !strings.Contains(got.Note, "not a diagnostic device") {
		t.Error("JSON lacks the research-software note")
	}

	code, stdout, _ = runSkein(t, "compare", filepath.Join(root, "a"), filepath.Join(root, "b"))
	for _, want := range []string{"1 removed (" + gone + ")", "cv.folds", "Versions: no difference", "pearson_r", "not a diagnostic device"} {
		if code != exitOK || !strings.Contains(stdout, want) {
			t.Errorf("compare (text): exit %d, output lacks %q:\n%s", code, want, stdout)
		}
	}
	code, stdout, _ = runSkein(t, "compare", filepath.Join(root, "a"), filepath.Join(root, "b"), "--markdown")
	if code != exitOK || !strings.Contains(stdout, "| `cv.folds` | 3 | 4 |") {
		t.Errorf("compare --markdown: exit %d:\n%s", code, stdout)
	}

	code, _, stderr = runSkein(t, "compare", filepath.Join(root, "a"), dir)
	if code != exitBadInput || !strings.Contains(stderr, "predictions.csv is missing") {
		t.Errorf("compare with a cohort folder: exit %d, %q; want %d naming the missing file", code, stderr, exitBadInput)
	}
}

// TestRunAgainstDrift: an identical rerun keeps to the drift rule; a rerun
// whose scores were shuffled breaks it with exit code 4, its results still
// committed; every run adds its rows to the history beside the experiment
// file (nightly.history.csv), never beside the run folders.
func TestRunAgainstDrift(t *testing.T) {
	t.Parallel()
	dir := nightlyCohort(t, synth.Config{N: 80, P: 10, Seed: 8, Ceiling: 0.9})
	exp := experimentFile(t, dir, "nightly.toml", `[cv]
folds = 3

[drift]
worsen = { pearson_r = 0.2 }

[sample_size]
fractions = [0.5, 1.0]

[[model]]
name = "ridge"
[model.ridge]
`)
	root := t.TempDir()
	night := func(n string) string { return filepath.Join(root, n) }
	if code, _, stderr := runSkein(t, "run", exp, "--out", night("1")); code != exitOK {
		t.Fatalf("night 1: exit %d: %s", code, stderr)
	}
	for _, name := range []string{"sample_size.csv", "sample_size.png", "sample_size.svg"} {
		if _, err := os.Stat(filepath.Join(night("1"), name)); err != nil {
			t.Errorf("run folder lacks %s", name)
		}
	}
	code, _, stderr := runSkein(t, "run", exp, "--out", night("2"), "--against", night("1"))
	if code != exitOK {
		t.Fatalf("identical rerun: exit %d: %s", code, stderr)
	}
	if md, err := os.ReadFile(filepath.Join(night("2"), "drift.md")); err != nil || !strings.Contains(string(md), "keeps to") {
		t.Errorf("drift.md of the identical rerun: %v\n%s", err, md)
	}

	rng := rand.New(rand.NewPCG(8, 8))
	editParticipants(t, dir, func(rows [][]string) [][]string {
		body := rows[1:]
		perm := rng.Perm(len(body))
		shuffled := [][]string{rows[0]}
		for i, r := range body {
			q := append([]string(nil), r...)
			q[1], q[2] = body[perm[i]][1], body[perm[i]][2] // recall, fluency
			shuffled = append(shuffled, q)
		}
		return shuffled
	})
	code, _, stderr = runSkein(t, "run", exp, "--out", night("3"), "--against", night("1"))
	if code != exitDrift {
		t.Fatalf("shuffled scores: exit %d, want %d: %s", code, exitDrift, stderr)
	}
	for _, want := range []string{`model "ridge"`, `target "recall"`, "pearson_r fell from", "drift.worsen.pearson_r = 0.2", night("3")} {
		if !strings.Contains(stderr, want) {
			t.Errorf("drift message lacks %q:\n%s", want, stderr)
		}
	}
	if _, err := os.Stat(filepath.Join(night("3"), "metrics.json")); err != nil {
		t.Error("the drifting run was not committed")
	}

	raw, err := os.ReadFile(filepath.Join(dir, "nightly.history.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(raw)), "\n")
	if lines[0] != "date,experiment,run,model,target,r_within_folds,mae,permutation_p,n" || len(lines) != 1+3*2 {
		t.Errorf("nightly.history.csv: want a header and 3 nights × 2 targets, found\n%s", raw)
	}
	if png, err := os.ReadFile(filepath.Join(dir, "nightly.history.png")); err != nil || !bytes.HasPrefix(png, []byte("\x89PNG")) {
		t.Errorf("nightly.history.png: %v", err)
	}
	if entries, _ := os.ReadDir(root); len(entries) != 3 {
		t.Errorf("the runs' folder holds %d entries, want the 3 run folders alone (no history beside them)", len(entries))
	}

	code, _, stderr = runSkein(t, "run", exp, "--out", night("4"), "--against", filepath.Join(root, "nothing"))
	if code != exitBadInput || !strings.Contains(stderr, "--against") {
		t.Errorf("--against a missing folder: exit %d, %q", code, stderr)
	}
}
