package main

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"slices"
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

// TestPredictSavedBaselinesOnAFewNew: kernel ridge (both kernels) and
// CPM fold models are saved by a run and, asked to predict three of their
// test participants from a cohort file with neither targets nor score
// columns (min_participants left at its default of 10), give the
// predictions the run recorded: CPM to the bit, kernel ridge within
// 1e-12 relative (its saved primal weights take the products in another
// order). Pointing predict at a model's folder lists its fold folders and
// the refitted model.
func TestPredictSavedBaselinesOnAFewNew(t *testing.T) {
	t.Parallel()
	exp := synthExperiment(t, synth.Config{N: 40, P: 10, Seed: 9},
		"[output]\nrefit = true\n"+
			"[[model]]\nname = \"krr-corr\"\n[model.kernel_ridge]\ninput = \"both\"\n"+
			"[[model]]\nname = \"krr-linear\"\n[model.kernel_ridge]\nkernel = \"linear\"\n"+
			"[[model]]\nname = \"cpm\"\n[model.cpm]\np_threshold = 0.1\n")
	out := filepath.Join(t.TempDir(), "run")
	code, stdout, stderr := runSkein(t, "run", exp, "--out", out, "--no-history")
	if code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	// The tables printed at the end fit a terminal of 100 columns.
	for _, line := range strings.Split(stdout, "\n") {
		if n := len([]rune(line)); n > 100 && !strings.HasPrefix(line, "Results in ") {
			t.Errorf("run printed a line of %d characters: %q", n, line)
		}
	}
	for _, want := range []string{"r within folds", "krr-linear", "comparison", "Δr vs reference", "Results in " + out} {
		if !strings.Contains(stdout, want) {
			t.Errorf("run's output lacks %q:\n%s", want, stdout)
		}
	}
	// Three test participants of repeat 2, fold 3, in a table of their own
	// without scores, beside the cohort's matrices.
	recorded := make(map[string]string) // model|participant|target -> predicted
	var few []string
	for _, rec := range readCSV(t, filepath.Join(out, "predictions.csv"))[1:] {
		if rec[3] == "2" && rec[4] == "3" {
			recorded[rec[1]+"|"+rec[0]+"|"+rec[2]] = rec[6]
			if len(few) < 3 && !slices.Contains(few, rec[0]) {
				few = append(few, rec[0])
			}
		}
	}
	dir := filepath.Dir(exp)
	if err := os.WriteFile(filepath.Join(dir, "new.tsv"), []byte("participant_id\n"+strings.Join(few, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	cohort := filepath.Join(dir, "new.toml")
	if err := os.WriteFile(cohort, []byte("[cohort]\nparticipants = \"new.tsv\"\nregions = \"regions.txt\"\n"+
		"[cohort.functional]\nfiles = \"fc/{participant_id}_fc.tsv\"\n[cohort.structural]\nfiles = \"sc/{participant_id}_sc.tsv\"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, m := range []struct {
		name string
		tol  float64
	}{{"krr-corr", 1e-12}, {"krr-linear", 1e-12}, {"cpm", 0}} {
		predicted := filepath.Join(t.TempDir(), "new.csv")
		if code, _, stderr := runSkein(t, "predict", filepath.Join(out, "models", m.name, "r2-f3"), cohort, "--out", predicted); code != exitOK {
			t.Fatalf("%s: predict: exit %d: %s", m.name, code, stderr)
		}
		rows := readCSV(t, predicted)[1:]
		if len(rows) != 3*2 {
			t.Fatalf("%s: %d predictions, want 3 participants × 2 targets", m.name, len(rows))
		}
		for _, rec := range rows {
			want, ok := recorded[m.name+"|"+rec[0]+"|"+rec[2]]
			if !ok {
				t.Fatalf("%s: %s %s was not in the run's fold", m.name, rec[0], rec[2])
			}
			g, _ := strconv.ParseFloat(rec[4], 64)
			w, _ := strconv.ParseFloat(want, 64)
			if (m.tol == 0 && rec[4] != want) || math.Abs(g-w) > m.tol*math.Max(1, math.Abs(w)) {
				t.Errorf("%s: %s %s: predict gives %s, the run recorded %s", m.name, rec[0], rec[2], rec[4], want)
			}
		}
	}
	code, _, stderr = runSkein(t, "predict", filepath.Join(out, "models", "cpm"), cohort)
	for _, want := range []string{"models/cpm: not a saved model's folder (no fitted.json)",
		"the fold models r1-f1, r1-f2, r1-f3, r1-f4, r2-f1, r2-f2, r2-f3, r2-f4 (each trained on one training fold",
		filepath.Join(out, "models", "cpm", "all") + ", the model refitted on all participants"} {
		if code != exitBadInput || !strings.Contains(stderr, want) {
			t.Errorf("predict on the model's folder: exit %d, stderr %q lacks %q", code, stderr, want)
		}
	}
}

// TestPredictClasses: the saved classifiers of a run with a class label
// predict the participants again. A folder of a classifier alone
// (logistic) writes participant_id,model,target,class,probability,
// predicted_class to --out, with the probabilities the run recorded in
// class_predictions.csv for the fold's test participants (within 1e-12:
// predict takes every participant in one product, the run the fold's;
// train's TestSavedClassifiers compares the same fold's rows bit for bit)
// and the class at the run's threshold of 0.4; the refitted network
// writes its scores to --out and its classes to --classes, and without
// --classes says how to get them.
func TestPredictClasses(t *testing.T) {
	t.Parallel()
	exp := writeExperiment(t, synth.Config{N: 30, P: 8, Seed: 4, Label: &synth.Label{Name: "diagnosis", Prevalence: 0.4}},
		"\n[cv]\nfolds = 3\nthreshold = 0.4\n[output]\nrefit = true\n"+
			"[[model]]\nname = \"logistic\"\n[model.logistic]\n"+
			"[[model]]\nname = \"net\"\n[model.network]\nepochs = 2\n[[model.network.branch]]\ninput = \"functional\"\n"+
			"layers = [{kind = \"e2n\", channels = 2}, {kind = \"n2g\", size = 4}]\n")
	out := filepath.Join(t.TempDir(), "run")
	if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--jobs", "1", "--no-history"); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	recorded := make(map[string]float64) // participant|class -> probability, repeat 1, fold 1
	for _, rec := range readCSV(t, filepath.Join(out, "class_predictions.csv"))[1:] {
		if rec[1] == "logistic" && rec[3] == "1" && rec[4] == "1" {
			recorded[rec[0]+"|"+rec[6]], _ = strconv.ParseFloat(rec[7], 64)
		}
	}
	predicted := filepath.Join(t.TempDir(), "classes.csv")
	if code, _, stderr := runSkein(t, "predict", filepath.Join(out, "models", "logistic", "r1-f1"), exp, "--out", predicted); code != exitOK {
		t.Fatalf("predict: exit %d: %s", code, stderr)
	}
	rows := readCSV(t, predicted)
	if got := strings.Join(rows[0], ","); got != "participant_id,model,target,class,probability,predicted_class" {
		t.Fatalf("header %s", got)
	}
	if len(rows)-1 != 30*2 {
		t.Fatalf("%d rows, want 30 participants × 2 classes", len(rows)-1)
	}
	matched := 0
	for i := 1; i < len(rows); i += 2 {
		control, patient := rows[i], rows[i+1]
		if control[3] != "control" || patient[3] != "patient" || control[2] != "diagnosis" || control[5] != patient[5] {
			t.Fatalf("rows %v and %v", control, patient)
		}
		p, _ := strconv.ParseFloat(patient[4], 64)
		if want := map[bool]string{true: "patient", false: "control"}[p >= 0.4]; patient[5] != want {
			t.Errorf("%s: P(patient) = %v, predicted %s, want %s at threshold 0.4", patient[0], p, patient[5], want)
		}
		if w, ok := recorded[patient[0]+"|patient"]; ok {
			matched++
			if math.Abs(p-w) > 1e-12 {
				t.Errorf("%s: predict gives %v, the run recorded %v", patient[0], p, w)
			}
		}
	}
	if matched == 0 {
		t.Fatal("no test participant of fold 1 was predicted")
	}

	scores, classes := filepath.Join(t.TempDir(), "scores.csv"), filepath.Join(t.TempDir(), "net-classes.csv")
	net := filepath.Join(out, "models", "net", "all")
	if code, _, stderr := runSkein(t, "predict", net, exp, "--out", scores, "--classes", classes); code != exitOK {
		t.Fatalf("predict: exit %d: %s", code, stderr)
	}
	if s, c := readCSV(t, scores), readCSV(t, classes); s[0][3] != "predicted" || len(s)-1 != 30*2 || c[0][5] != "predicted_class" || len(c)-1 != 30*2 {
		t.Errorf("the network's scores (%d rows, header %v) and classes (%d rows, header %v)", len(s)-1, s[0], len(c)-1, c[0])
	}
	code, stdout, stderr := runSkein(t, "predict", net, exp)
	if code != exitOK || !strings.Contains(stderr, "the model also classifies diagnosis; pass --classes FILE") || !strings.HasPrefix(stdout, "participant_id,model,target,predicted,") {
		t.Errorf("predict without --classes: exit %d, stderr %q, stdout %.80q", code, stderr, stdout)
	}
}
