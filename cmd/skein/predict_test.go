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
	"github.com/skein-neuro/skein/internal/blas"
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
// predictions the run recorded: to the bit in the pure-Go build, whose
// products are cut into tiles fixed by the shapes; to float32 rounding
// with OpenBLAS, whose sgemm picks its kernels by the number of rows (the
// test fold in the run, every participant in predict).
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
	// The network standardizes its inputs per edge (the default): the
	// step is saved with the fold model, and predict replays it.
	if fitted, err := os.ReadFile(filepath.Join(out, "models", "net", "r1-f1", "fitted.json")); err != nil || !strings.Contains(string(fitted), `"step": "edges"`) {
		t.Fatalf("fold model's fitted.json has no edges step (%v)", err)
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
			if !samePrediction(rec[4], want) {
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

// sameCSV reports whether two CSV texts have the same lines and cells,
// cells that are both numbers being equal within relative tolerance tol.
func sameCSV(got, want string, tol float64) bool {
	gl, wl := strings.Split(got, "\n"), strings.Split(want, "\n")
	if len(gl) != len(wl) {
		return false
	}
	for i := range gl {
		gc, wc := strings.Split(gl[i], ","), strings.Split(wl[i], ",")
		if len(gc) != len(wc) {
			return false
		}
		for j := range gc {
			if gc[j] == wc[j] {
				continue
			}
			g, err1 := strconv.ParseFloat(gc[j], 64)
			w, err2 := strconv.ParseFloat(wc[j], 64)
			if err1 != nil || err2 != nil || math.Abs(g-w) > tol*math.Max(1, math.Abs(w)) {
				return false
			}
		}
	}
	return true
}

// samePrediction reports whether two predictions written by skein agree:
// as text in the pure-Go build, within float32 rounding (relative 1e-6,
// about 8 units in the last place) with OpenBLAS.
func samePrediction(got, want string) bool {
	if blas.Name() != "openblas" {
		return got == want
	}
	g, err1 := strconv.ParseFloat(got, 64)
	w, err2 := strconv.ParseFloat(want, 64)
	return err1 == nil && err2 == nil && math.Abs(g-w) <= 1e-6*math.Max(1, math.Abs(w))
}

// TestPredictReadsVersion1: a fold model whose fitted.json an earlier skein
// wrote (version 1, testdata/predict/v1/make.sh) predicts what that
// skein's predict wrote for it, the same text but for the last bits of the
// numbers (relative 1e-12: that skein's products were gonum's reference
// kernels, whose sums run in another order than internal/gemm's); a
// cohort without a covariate the model regressed out is an error naming
// it.
func TestPredictReadsVersion1(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "predict", "v1")
	want, err := os.ReadFile(filepath.Join(dir, "predict.csv"))
	if err != nil {
		t.Fatal(err)
	}
	exp := filepath.Join(dir, "cohort", "experiment.toml")
	got := filepath.Join(t.TempDir(), "predict.csv")
	if code, _, stderr := runSkein(t, "predict", filepath.Join(dir, "model"), exp, "--out", got); code != exitOK {
		t.Fatalf("predict: exit %d: %s", code, stderr)
	}
	if raw, _ := os.ReadFile(got); !sameCSV(string(raw), string(want), 1e-12) {
		t.Errorf("predict wrote\n%s\nthe skein that saved the model wrote\n%s", raw, want)
	}

	raw, err := os.ReadFile(exp)
	if err != nil {
		t.Fatal(err)
	}
	abs, err := filepath.Abs(filepath.Join(dir, "cohort"))
	if err != nil {
		t.Fatal(err)
	}
	text := strings.NewReplacer(`"participants.tsv"`, strconv.Quote(filepath.Join(abs, "participants.tsv")),
		`"regions.txt"`, strconv.Quote(filepath.Join(abs, "regions.txt")),
		`"fc/{participant_id}_fc.tsv"`, strconv.Quote(filepath.Join(abs, "fc", "{participant_id}_fc.tsv")),
		`covariates = ["age", "sex", "motion"]`, `covariates = ["age", "sex"]`).Replace(string(raw))
	noMotion := filepath.Join(t.TempDir(), "experiment.toml")
	if err := os.WriteFile(noMotion, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runSkein(t, "predict", filepath.Join(dir, "model"), noMotion, "--out", got)
	if code == exitOK || !strings.Contains(stderr, `"motion"`) {
		t.Errorf("cohort without motion: exit %d, stderr %q; want an error naming \"motion\"", code, stderr)
	}
}
