package main

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data/synth"
)

const tinyNetwork = `
[cv]
confounds = ["age", "motion"]
[output]
refit = true

[[model]]
name = "net"
[model.network]
epochs = 3
head = [4]
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2n", channels = 4}, {kind = "n2g", size = 4}]
`

// TestPredictReproducesTestFold: a saved fold model, asked to predict the
// cohort again, gives for the fold's test participants exactly the
// predictions the run recorded.
func TestPredictReproducesTestFold(t *testing.T) {
	t.Parallel()
	exp := synthExperiment(t, synth.Config{N: 30, P: 8, Seed: 6}, "")
	raw, _ := os.ReadFile(exp)
	// synthExperiment appended a [cv] table; replace it by the one above.
	text := strings.Replace(string(raw), "\n[cv]\nfolds = 4\nrepeats = 2\n\n", "", 1) + tinyNetwork
	os.WriteFile(exp, []byte(text), 0o644)
	out := filepath.Join(t.TempDir(), "run")
	if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--jobs", "1"); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	if _, err := os.Stat(filepath.Join(out, "models", "net", "all", "fitted.json")); err != nil {
		t.Fatalf("refit model missing: %v", err)
	}
	recorded := make(map[string]string) // participant|target -> predicted, fold 1 of repeat 1 (r1-f1)
	for _, rec := range readCSV(t, filepath.Join(out, "predictions.csv"))[1:] {
		if rec[3] == "1" && rec[4] == "1" {
			recorded[rec[0]+"|"+rec[2]] = rec[6]
		}
	}
	predicted := filepath.Join(t.TempDir(), "new.csv")
	if code, _, stderr := runSkein(t, "predict", filepath.Join(out, "models", "net", "r1-f1"), exp, "--out", predicted); code != exitOK {
		t.Fatalf("predict: exit %d: %s", code, stderr)
	}
	rows := readCSV(t, predicted)
	if strings.Join(rows[0], ",") != "participant_id,model,target,predicted,predicted_residual" {
		t.Fatalf("header %v", rows[0])
	}
	matched := 0
	for _, rec := range rows[1:] {
		if want, ok := recorded[rec[0]+"|"+rec[2]]; ok {
			matched++
			if rec[4] != want {
				t.Errorf("%s %s: predict gives %s, the run recorded %s", rec[0], rec[2], rec[4], want)
			}
		}
	}
	if matched == 0 {
		t.Fatal("no test participant of fold 1 was predicted")
	}
	if len(rows)-1 != 30*2 {
		t.Errorf("%d predictions, want 60", len(rows)-1)
	}
}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

// TestPredictWithSavedRidge: a saved ridge fold model predicts its test
// fold as the run did, to rounding (saving folds the dual solution into
// primal weights).
func TestPredictWithSavedRidge(t *testing.T) {
	t.Parallel()
	exp := synthExperiment(t, synth.Config{N: 40, P: 10, Seed: 8}, "[[model]]\nname = \"ridge\"\n[model.ridge]\ninput = \"both\"\n")
	out := filepath.Join(t.TempDir(), "run")
	if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--no-history"); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	recorded := make(map[string]float64)
	for _, rec := range readCSV(t, filepath.Join(out, "predictions.csv"))[1:] {
		if rec[3] == "2" && rec[4] == "3" {
			v, _ := strconv.ParseFloat(rec[6], 64)
			recorded[rec[0]+"|"+rec[2]] = v
		}
	}
	predicted := filepath.Join(t.TempDir(), "new.csv")
	if code, _, stderr := runSkein(t, "predict", filepath.Join(out, "models", "ridge", "r2-f3"), exp, "--out", predicted); code != exitOK {
		t.Fatalf("predict: exit %d: %s", code, stderr)
	}
	matched := 0
	for _, rec := range readCSV(t, predicted)[1:] {
		want, ok := recorded[rec[0]+"|"+rec[2]]
		if !ok {
			continue
		}
		matched++
		got, _ := strconv.ParseFloat(rec[4], 64)
		if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("%s %s: predict gives %v, the run recorded %v", rec[0], rec[2], got, want)
		}
	}
	if matched == 0 {
		t.Fatal("no test participant of repeat 2, fold 3 was predicted")
	}
}
