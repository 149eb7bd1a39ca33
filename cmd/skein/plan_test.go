package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data/synth"
)

// batchExperiment is a small experiment with every kind of unit: two
// baselines and a small network, 3 folds × 2 repeats with confounds and a
// permutation test whose chunks of 4 split 10 permutations unevenly.
const batchExperiment = `
[cv]
folds = 3
repeats = 2
confounds = ["age", "sex"]

[permutation]
count = 10
chunk = 4

[sample_size]
fractions = [0.5, 1]
models = ["ridge", "net"]

[[model]]
name = "mean"
[model.mean]

[[model]]
name = "ridge"
[model.ridge]

[[model]]
name = "net"
[model.network]
head = [4]
epochs = 4
batch_size = 8
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2n", channels = 4}, {kind = "n2g", size = 4}]
`

// writeBatchExperiment writes a synthetic cohort of n participants and the
// experiment file extra and returns its path.
func writeBatchExperiment(t *testing.T, n int, extra string) string {
	t.Helper()
	return writeExperiment(t, synth.Config{N: n, P: 8, Seed: 11, FamilySize: 2}, extra)
}

// resultFiles are the files a merged run must share, byte for byte, with
// a single-machine run of the same experiment.
var resultFiles = []string{"predictions.csv", "metrics.json", "summary.md", "permutations.csv", "sample_size.csv", "learning_curves.csv", "experiment.toml", "cohort.json"}

func compareRuns(t *testing.T, single, merged string, files []string) {
	t.Helper()
	for _, name := range files {
		want, err := os.ReadFile(filepath.Join(single, name))
		if err != nil {
			t.Fatal(err)
		}
		got, err := os.ReadFile(filepath.Join(merged, name))
		if err != nil {
			t.Errorf("merged run: %v", err)
			continue
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%s differs between the merged and the single-machine run:\nmerged:\n%.600s\nsingle:\n%.600s", name, got, want)
		}
	}
}

// planUnits reads the unit indices of units.tsv.
func planUnits(t *testing.T, out string) []string {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join(out+".partial", "units.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSuffix(string(raw), "\n"), "\n")
	if lines[0] != "index\tkind\tmodel\trepeat\tfold\tpermutations\tfraction\tcommand" {
		t.Fatalf("units.tsv header %q", lines[0])
	}
	var ids []string
	for _, l := range lines[1:] {
		ids = append(ids, strings.SplitN(l, "\t", 2)[0])
	}
	return ids
}

// TestPlanUnitsMergeEqualsSingleRun is not parallel: it sets
// SLURM_ARRAY_TASK_ID for the whole process (t.Setenv).
func TestPlanUnitsMergeEqualsSingleRun(t *testing.T) {
	exp := writeBatchExperiment(t, 40, batchExperiment)
	single := filepath.Join(t.TempDir(), "single")
	if code, _, stderr := runSkein(t, "run", exp, "--out", single); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}

	out := filepath.Join(t.TempDir(), "batch")
	code, stdout, stderr := runSkein(t, "plan", exp, "--out", out, "--block", "4", "--time", "00:10:00", "--mem", "1G", "--partition", "short", "--skein", "/opt/skein")
	if code != exitOK {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	// 3 models × 6 folds, then per model blocks of 4, 4 and 2 permutations.
	ids := planUnits(t, out)
	if len(ids) != 18+9+4 || !strings.Contains(stdout, "31 units (18 model × fold units, 9 permutation blocks, 4 sample-size points)") {
		t.Fatalf("plan has %d units; said %q", len(ids), stdout)
	}
	if _, err := os.Stat(out); err == nil {
		t.Fatal("plan created the run folder itself; it must only write its work folder")
	}
	job, err := os.ReadFile(filepath.Join(out+".partial", "job.sh"))
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"#SBATCH --array=0-30\n", "#SBATCH --time=00:10:00\n", "#SBATCH --mem=1G\n", "#SBATCH --partition=short\n", "exec /opt/skein run "} {
		if !strings.Contains(string(job), want) {
			t.Errorf("job.sh lacks %q:\n%s", want, job)
		}
	}

	// Merging before every unit ran lists the missing ones and merges nothing.
	for _, k := range []string{"0", "5", "19"} {
		if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--unit", k, "--jobs", "1"); code != exitOK {
			t.Fatalf("unit %s: exit %d: %s", k, code, stderr)
		}
	}
	code, _, stderr = runSkein(t, "merge", out)
	if code == exitOK || !strings.Contains(stderr, "28 of 31 units have not finished") ||
		!strings.Contains(stderr, "sbatch --array=1-4,6-18,20-30 ") {
		t.Fatalf("merge with missing units: exit %d: %s", code, stderr)
	}
	if _, err := os.Stat(out); err == nil {
		t.Fatal("a merge with missing units created the run folder")
	}

	// The other units, from the last one down as a scheduler might, and
	// one again: a finished unit is skipped.
	for i := len(ids) - 1; i >= 0; i-- {
		if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--unit", ids[i], "--jobs", "2"); code != exitOK {
			t.Fatalf("unit %s: exit %d: %s", ids[i], code, stderr)
		}
	}
	for _, k := range []string{"13", "19"} {
		t.Setenv("SLURM_ARRAY_TASK_ID", k)
		if code, _, stderr := runSkein(t, "run", exp, "--out", out); code != exitOK || !strings.Contains(stderr, "unit "+k+" (") || !strings.Contains(stderr, "had finished already") {
			t.Fatalf("unit %s from SLURM_ARRAY_TASK_ID again: exit %d: %s", k, code, stderr)
		}
	}
	if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--unit", "31"); code != exitBadInput || !strings.Contains(stderr, "units 0 to 30") {
		t.Fatalf("unit 31 of 31: exit %d: %s", code, stderr)
	}
	if code, stdout, stderr := runSkein(t, "merge", out); code != exitOK || !strings.Contains(stdout, "not a diagnostic device") {
		t.Fatalf("merge: exit %d: %s%s", code, stdout, stderr)
	}
	compareRuns(t, single, out, resultFiles)
	// The unit checkpoints too, with the baselines' grid choices and inner
	// validation errors.
	units := []string{"units/mean/r2-f3.json", "units/ridge/r1-f2.json"}
	compareRuns(t, single, out, units)
	if raw, _ := os.ReadFile(filepath.Join(out, units[1])); !bytes.Contains(raw, []byte(`"choices":`)) || !bytes.Contains(raw, []byte(`"inner_loss":`)) {
		t.Errorf("%s lacks the choices or the inner validation error:\n%.600s", units[1], raw)
	}
	if _, err := os.Stat(out + ".partial"); err == nil {
		t.Error("merge left the work folder behind")
	}

	// A merged plan is finished: units and merges are refused.
	if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--unit", "0"); code != exitBadInput || !strings.Contains(stderr, "merged already") {
		t.Errorf("unit after merge: exit %d: %s", code, stderr)
	}
	if code, _, stderr := runSkein(t, "merge", out); code != exitBadInput || !strings.Contains(stderr, "merged already") {
		t.Errorf("merge after merge: exit %d: %s", code, stderr)
	}
}

func TestPlanRefusesAnotherExperiment(t *testing.T) {
	t.Parallel()
	exp := writeBatchExperiment(t, 30, batchExperiment)
	out := filepath.Join(t.TempDir(), "batch")
	if code, _, stderr := runSkein(t, "plan", exp, "--out", out); code != exitOK {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--unit", "0"); code != exitOK {
		t.Fatalf("unit 0: exit %d: %s", code, stderr)
	}
	// Planning the same experiment again keeps the finished unit.
	if code, stdout, stderr := runSkein(t, "plan", exp, "--out", out); code != exitOK || !strings.Contains(stdout, "finished units are kept") {
		t.Fatalf("plan again: exit %d: %s%s", code, stdout, stderr)
	}
	if _, err := os.Stat(filepath.Join(out+".partial", "units", "mean", "r1-f1.json")); err != nil {
		t.Fatalf("planning again lost unit 0: %v", err)
	}
	// A changed experiment is refused by plan and by the units, until
	// plan --force starts over.
	raw, _ := os.ReadFile(exp)
	os.WriteFile(exp, bytes.Replace(raw, []byte("count = 10"), []byte("count = 12"), 1), 0o644)
	if code, _, stderr := runSkein(t, "plan", exp, "--out", out); code != exitBadInput || !strings.Contains(stderr, "--force") {
		t.Errorf("plan of a changed experiment: exit %d: %s", code, stderr)
	}
	if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--unit", "1"); code != exitBadInput || !strings.Contains(stderr, "differs from the one planned") {
		t.Errorf("unit of a changed experiment: exit %d: %s", code, stderr)
	}
	if code, _, stderr := runSkein(t, "plan", exp, "--out", out, "--force"); code != exitOK {
		t.Fatalf("plan --force: exit %d: %s", code, stderr)
	}
	if _, err := os.Stat(filepath.Join(out+".partial", "units", "mean", "r1-f1.json")); err == nil {
		t.Error("plan --force kept a unit of the earlier plan")
	}
	// --unit without a plan.
	other := filepath.Join(t.TempDir(), "none")
	if code, _, stderr := runSkein(t, "run", exp, "--out", other, "--unit", strconv.Itoa(0)); code != exitBadInput || !strings.Contains(stderr, "holds no plan") {
		t.Errorf("unit without a plan: exit %d: %s", code, stderr)
	}
}

func TestMergeListsFailedUnits(t *testing.T) {
	t.Parallel()
	// A network whose learning rate makes its loss diverge fails every
	// unit (exit code 3); merge lists the failures with their errors.
	exp := writeBatchExperiment(t, 30, strings.Replace(batchExperiment, "batch_size = 8\n", "batch_size = 8\n[model.network.optimizer]\nrate = 1e30\n", 1))
	out := filepath.Join(t.TempDir(), "batch")
	if code, _, stderr := runSkein(t, "plan", exp, "--out", out); code != exitOK {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	for _, k := range planUnits(t, out) {
		runSkein(t, "run", exp, "--out", out, "--unit", k, "--jobs", "1")
	}
	code, _, stderr := runSkein(t, "merge", out)
	if code == exitOK || !strings.Contains(stderr, `unit 12, model "net", repeat 1, fold 1: failed: `) || strings.Contains(stderr, "unit 11,") {
		t.Fatalf("merge after failed units: exit %d: %s", code, stderr)
	}
}

func TestSweepRankedByInnerValidation(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("-short: runs a sweep of 45 units one by one and merges them")
	}
	exp := writeBatchExperiment(t, 40, batchExperiment+`
[[sweep]]
model = "net"
key = "network.epochs"
values = [2, 6]

[[sweep]]
model = "ridge"
key = "ridge.input"
values = ["functional", "both"]
`)
	single := filepath.Join(t.TempDir(), "single")
	if code, _, stderr := runSkein(t, "run", exp, "--out", single); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	out := filepath.Join(t.TempDir(), "batch")
	code, stdout, stderr := runSkein(t, "plan", exp, "--out", out, "--block", "4")
	// mean, 2 ridge and 2 net variants: 5 models × 6 folds, 3
	// permutation blocks each, and 2 sample-size points of each variant.
	if code != exitOK || !strings.Contains(stdout, "53 units (30 model × fold units, 15 permutation blocks, 8 sample-size points)") {
		t.Fatalf("plan: exit %d: %s%s", code, stdout, stderr)
	}
	for _, k := range planUnits(t, out) {
		if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--unit", k); code != exitOK {
			t.Fatalf("unit %s: exit %d: %s", k, code, stderr)
		}
	}
	if code, _, stderr := runSkein(t, "merge", out); code != exitOK {
		t.Fatalf("merge: exit %d: %s", code, stderr)
	}
	compareRuns(t, single, out, append(resultFiles, "sweep.csv"))

	raw, err := os.ReadFile(filepath.Join(out, "sweep.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(raw)), "\n")
	if len(lines) != 5 || lines[0] != "model,variant,rank,inner_valid_loss,units,settings" {
		t.Fatalf("sweep.csv:\n%s", raw)
	}
	ranked := 0
	for _, l := range lines[1:] {
		f := strings.Split(l, ",")
		switch {
		case strings.HasPrefix(l, "ridge,"):
			if f[2] != "" || f[3] != "" {
				t.Errorf("a baseline variant is ranked: %s", l)
			}
		case strings.HasPrefix(l, "net,"):
			ranked++
			if f[2] != strconv.Itoa(ranked) || f[4] != "6" {
				t.Errorf("network variant %d: %s", ranked, l)
			}
		}
	}
	if ranked != 2 {
		t.Errorf("%d network variants ranked, want 2:\n%s", ranked, raw)
	}
}

func TestPlanForceReplacesMergedRun(t *testing.T) {
	t.Parallel()
	exp := writeBatchExperiment(t, 30, "\n[cv]\nfolds = 3\n\n"+meanModel)
	out := filepath.Join(t.TempDir(), "batch")
	planAndMerge := func(args ...string) {
		t.Helper()
		if code, _, stderr := runSkein(t, append([]string{"plan", exp, "--out", out}, args...)...); code != exitOK {
			t.Fatalf("plan %v: exit %d: %s", args, code, stderr)
		}
		for _, k := range planUnits(t, out) {
			if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--unit", k); code != exitOK {
				t.Fatalf("unit %s: exit %d: %s", k, code, stderr)
			}
		}
		if code, _, stderr := runSkein(t, "merge", out); code != exitOK {
			t.Fatalf("merge: exit %d: %s", code, stderr)
		}
	}
	planAndMerge()
	first, _ := os.ReadFile(filepath.Join(out, "predictions.csv"))
	if code, _, stderr := runSkein(t, "plan", exp, "--out", out); code != exitBadInput || !strings.Contains(stderr, "--force") {
		t.Fatalf("plan over a merged run: exit %d: %s", code, stderr)
	}
	planAndMerge("--force")
	second, err := os.ReadFile(filepath.Join(out, "predictions.csv"))
	if err != nil || !bytes.Equal(first, second) {
		t.Fatalf("the replaced run differs: %v", err)
	}
	if _, err := os.Stat(out + ".partial"); err == nil {
		t.Error("work folder left behind")
	}
}

// batchLabelExperiment runs the mean predictor, ridge and a small network
// on a cohort with scores and a class label (the network learns both, the
// baselines the scores only), 3 folds × 2 repeats with confounds and a
// permutation test of 6 permutations in chunks of 4.
const batchLabelExperiment = `
[cv]
folds = 3
repeats = 2
confounds = ["age", "sex"]

[permutation]
count = 6
chunk = 4

[[model]]
name = "mean"
[model.mean]

[[model]]
name = "ridge"
[model.ridge]

[[model]]
name = "net"
[model.network]
head = [4]
epochs = 4
batch_size = 8
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2n", channels = 4}, {kind = "n2g", size = 4}]
`

// TestPlanUnitsMergeEqualsSingleRunWithLabel: with a class label, the
// merged units of a batch plan give the files of a single-machine run byte
// for byte, class_predictions.csv, the label's metrics and its null AUC in
// permutations.csv included.
func TestPlanUnitsMergeEqualsSingleRunWithLabel(t *testing.T) {
	exp := writeExperiment(t, synth.Config{N: 42, P: 8, Seed: 12, FamilySize: 2,
		Label: &synth.Label{Name: "diagnosis", Prevalence: 0.4}}, batchLabelExperiment)
	single := filepath.Join(t.TempDir(), "single")
	if code, _, stderr := runSkein(t, "run", exp, "--out", single); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	out := filepath.Join(t.TempDir(), "batch")
	if code, _, stderr := runSkein(t, "plan", exp, "--out", out, "--block", "4"); code != exitOK {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	ids := planUnits(t, out)
	for i := len(ids) - 1; i >= 0; i-- {
		if code, _, stderr := runSkein(t, "run", exp, "--out", out, "--unit", ids[i], "--jobs", "2"); code != exitOK {
			t.Fatalf("unit %s: exit %d: %s", ids[i], code, stderr)
		}
	}
	if code, stdout, stderr := runSkein(t, "merge", out); code != exitOK {
		t.Fatalf("merge: exit %d: %s%s", code, stdout, stderr)
	}
	files := []string{"predictions.csv", "class_predictions.csv", "metrics.json", "summary.md", "permutations.csv", "experiment.toml", "cohort.json", "units/net/r2-f3.json"}
	compareRuns(t, single, out, files)
	raw, err := os.ReadFile(filepath.Join(out, "metrics.json"))
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`"label": "diagnosis"`, `"permutation_p_auc_within"`, `"auc_within"`, `"auc"`} {
		if !bytes.Contains(raw, []byte(want)) {
			t.Errorf("metrics.json lacks %s", want)
		}
	}
	// permutations.csv holds the label's null AUC within folds after the
	// scores' nulls: permutations 0 (observed) to 6 of the network.
	raw, err = os.ReadFile(filepath.Join(out, "permutations.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if header, _, _ := bytes.Cut(raw, []byte("\n")); !bytes.HasSuffix(header, []byte(",auc_within")) || !bytes.Contains(raw, []byte("\nnet,diagnosis,6,,")) {
		t.Errorf("permutations.csv lacks the auc_within column or the network's null AUC within folds of diagnosis:\n%.600s", raw)
	}
	if raw, _ := os.ReadFile(filepath.Join(out, "units/net/r2-f3.json")); !bytes.Contains(raw, []byte(`"class_predictions":`)) {
		t.Errorf("the network's checkpoint lacks its class predictions:\n%.400s", raw)
	}
}
