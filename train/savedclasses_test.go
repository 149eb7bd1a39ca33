package train

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model/linear"
)

// TestSavedClassifiers: a run that saves its models saves each fold's
// classifiers (and the refit's) with the fold's preparation, the label's
// name, classes and the run's threshold; loaded back, a fold's classifier
// gives the test participants of its fold the class probabilities the run
// recorded: exactly (compared with ==: the same participants, in the same
// order and number, go through the same weights and the same
// preparation), but for kernel logistic, saved in its primal form
// W = Xᵀα, whose products are summed in another order than the run's
// dual ones: within 1e-12 (measured: differences up to about 2e-16). A
// model fitted to scores and a label (the network) saves
// both; a classifying baseline saves its classifier alone.
func TestSavedClassifiers(t *testing.T) {
	c := withLabel(toyCohort(40, 6, 1, false), 1)
	three := withLabel(toyCohort(40, 6, 2, false), 2)
	three.Classes = [][]string{{"a", "b", "c"}}
	for i, p := range three.Participants {
		if p.Labels[0] >= 0 {
			p.Labels[0] = i % 3
		}
	}
	tests := []struct {
		name   string
		cohort *data.Cohort
		cfg    ModelConfig
		scores bool    // the model learns the scores too
		tol    float64 // 0: bit for bit
	}{
		{"majority", c, ModelConfig{Name: "majority", Config: linear.Config{Majority: &linear.MajorityConfig{}}}, false, 0},
		{"logistic", c, ModelConfig{Name: "logistic", Config: linear.Config{Logistic: &linear.LogisticConfig{}}}, false, 0},
		{"kernel_logistic", c, ModelConfig{Name: "kernel_logistic", Config: linear.Config{KernelLogistic: &linear.KernelLogisticConfig{}}}, false, 1e-12},
		{"network", c, tinyNetwork("net"), true, 0},
		{"logistic, three classes", three, ModelConfig{Name: "logistic", Config: linear.Config{Logistic: &linear.LogisticConfig{}}}, false, 0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tt.cfg.SetDefaults()
			d := &Design{Seed: 5, SaveModels: true, CV: CV{Folds: new(3), Repeats: new(1)}, Models: []ModelConfig{tt.cfg}}
			d.SetDefaults()
			dir := t.TempDir()
			r := &Runner{Design: d, Cohort: tt.cohort, Jobs: 1, Models: dir}
			res, err := r.Run(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			if err := r.Refit(context.Background()); err != nil {
				t.Fatal(err)
			}
			var worst float64
			defer func() { t.Logf("largest difference from the run: %.3g", worst) }()
			for _, s := range res.Splits {
				unit := filepath.Join(dir, unitPath(tt.cfg.Name, Unit{Repeat: s.Repeat, Fold: s.Fold}))
				saved, err := LoadModel(unit)
				if err != nil {
					t.Fatal(err)
				}
				f := saved.Fitted
				if len(f.Labels) != 1 || f.Labels[0].Name != "diagnosis" || !slices.Equal(f.Labels[0].Classes, tt.cohort.Classes[0]) || f.Threshold != 0.5 || len(saved.Classifiers) != 1 {
					t.Fatalf("%s: labels %+v, threshold %v, %d classifiers", unit, f.Labels, f.Threshold, len(saved.Classifiers))
				}
				if got := saved.Model != nil && slices.Equal(f.Targets, tt.cohort.Targets); got != tt.scores {
					t.Fatalf("%s: regressor %v, targets %v; want a regressor: %v", unit, saved.Model != nil, f.Targets, tt.scores)
				}
				if _, _, err := saved.Predict(tt.cohort); !tt.scores && (err == nil || !strings.Contains(err.Error(), "learnt no scores")) {
					t.Errorf("%s: Predict of a classifier alone: %v", unit, err)
				}
				// The fold's test participants whose label is known, as
				// the run classified them, without their scores and
				// labels.
				want := make(map[string][]float64)
				for _, cp := range res.ClassPredictions {
					if cp.Repeat == s.Repeat && cp.Fold == s.Fold {
						want[cp.ParticipantID] = cp.Probabilities
					}
				}
				test := subCohort(tt.cohort, s.Test)
				test.Participants = nil
				for _, i := range s.Test {
					if p := tt.cohort.Participants[i]; p.Labels[0] >= 0 {
						q := *p
						q.Scores, q.Labels = nil, nil
						test.Participants = append(test.Participants, &q)
					}
				}
				proba, err := saved.PredictClasses(test)
				if err != nil {
					t.Fatal(err)
				}
				if len(test.Participants) != len(want) {
					t.Fatalf("%s: %d test participants with a label, %d class predictions in the run", unit, len(test.Participants), len(want))
				}
				for i, p := range test.Participants {
					got := proba[0].RawRowView(i)
					if len(got) != len(want[p.ID]) {
						t.Fatalf("%s: %s: %d probabilities, want %d", unit, p.ID, len(got), len(want[p.ID]))
					}
					for k, w := range want[p.ID] {
						worst = max(worst, math.Abs(got[k]-w))
					}
					if tt.tol == 0 && !slices.Equal(got, want[p.ID]) || worst > tt.tol {
						t.Errorf("%s: %s: saved classifier gives %v, the run %v", unit, p.ID, got, want[p.ID])
					}
				}
			}
			refit, err := LoadModel(filepath.Join(dir, FolderName(tt.cfg.Name), refitFolder))
			if err != nil {
				t.Fatal(err)
			}
			if refit.Fitted.Repeat != 0 || len(refit.Classifiers) != 1 || (refit.Model != nil) != tt.scores {
				t.Fatalf("refit: repeat %d, %d classifiers, regressor %v", refit.Fitted.Repeat, len(refit.Classifiers), refit.Model != nil)
			}
			proba, err := refit.PredictClasses(tt.cohort)
			if err != nil {
				t.Fatal(err)
			}
			n, K := proba[0].Dims()
			for i := range n {
				var sum float64
				for k := range K {
					sum += proba[0].At(i, k)
				}
				if n != len(tt.cohort.Participants) || K != len(tt.cohort.Classes[0]) || math.Abs(sum-1) > 1e-12 {
					t.Fatalf("refit: %d × %d probabilities, row %d sums to %v", n, K, i, sum)
				}
			}
		})
	}
}

// TestLoadModelOfClassifierErrors: a saved classifier's folder missing,
// a fitted.json naming neither targets nor labels, and LoadModel pointed
// at a classifier's own folder each give an error naming the folder or
// file.
func TestLoadModelOfClassifierErrors(t *testing.T) {
	c := withLabel(toyCohort(24, 5, 3, false), 3)
	d := &Design{Seed: 5, SaveModels: true, CV: CV{Folds: new(3), Repeats: new(1)},
		Models: []ModelConfig{{Name: "majority", Config: linear.Config{Majority: &linear.MajorityConfig{}}}}}
	d.SetDefaults()
	dir := t.TempDir()
	if _, err := (&Runner{Design: d, Cohort: c, Jobs: 1, Models: dir}).Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	unit := filepath.Join(dir, "majority", "r1-f1")
	label := filepath.Join(unit, LabelsFolder, "diagnosis")
	if _, err := LoadModel(label); err == nil || !strings.Contains(err.Error(), "classifier of label diagnosis saved with the model in "+unit) {
		t.Errorf("LoadModel of the classifier's folder: %v", err)
	}
	raw, err := os.ReadFile(filepath.Join(unit, FittedFile))
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(unit, FittedFile), []byte(strings.Replace(string(raw), `"name": "diagnosis"`, `"name": "subtype"`, 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := LoadModel(unit); err == nil || !strings.Contains(err.Error(), unit+`: classifier of label "subtype"`) || !strings.Contains(err.Error(), filepath.Join(unit, LabelsFolder, "subtype")) {
		t.Errorf("LoadModel with a label whose folder is missing: %v", err)
	}
	none := strings.Replace(string(raw), `"name": "diagnosis"`, `"name": "diagnosis"`, 1)
	none = none[:strings.Index(none, `"labels"`)] + none[strings.Index(none, `"threshold"`):]
	if err := os.WriteFile(filepath.Join(unit, FittedFile), []byte(none), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := LoadModel(unit); err == nil || !strings.Contains(err.Error(), filepath.Join(unit, FittedFile)+": names neither targets nor labels") {
		t.Errorf("LoadModel of a fitted.json without targets or labels: %v", err)
	}
}
