package train

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"math/rand/v2"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/linear"
)

// nearestNeighbour is a test-only classifier: it gives a participant the
// class of the training participant whose functional upper triangle is
// nearest (Euclidean), with probability 0.8, and spreads 0.2 over the
// other classes. It can single out a participant, so a near-copy in the
// training fold carries a class over: what the sibling test needs. seen
// records every participant it was fitted on or shown as validation.
type nearestNeighbour struct {
	train model.LabelledSet
	seen  map[string]bool
}

func newNearestNeighbour(ModelConfig, int, int, int64) (model.Classifier, error) {
	return &nearestNeighbour{}, nil
}

func (m *nearestNeighbour) Fit(_ context.Context, train, valid model.LabelledSet) error {
	if train.Len() == 0 || len(train.Labels) != train.Len() {
		return fmt.Errorf("nearest neighbour: %d participants, %d labels", train.Len(), len(train.Labels))
	}
	m.train, m.seen = train, make(map[string]bool)
	for _, p := range slices.Concat(train.Participants, valid.Participants) {
		m.seen[p.ID] = true
	}
	return nil
}

func (m *nearestNeighbour) PredictProba(ps []*data.Participant) (*mat.Dense, error) {
	K := m.train.Classes
	out := mat.NewDense(len(ps), K, nil)
	for i, p := range ps {
		best, bestDist := 0, math.Inf(1)
		for j, q := range m.train.Participants {
			var d float64
			P, _ := p.Functional.Dims()
			for a := range P {
				for b := a + 1; b < P; b++ {
					x := p.Functional.At(a, b) - q.Functional.At(a, b)
					d += x * x
				}
			}
			if d < bestDist {
				best, bestDist = j, d
			}
		}
		for k := range K {
			out.Set(i, k, 0.2/float64(K-1))
		}
		out.Set(i, m.train.Labels[best], 0.8)
	}
	return out, nil
}

// withLabel returns a copy of c with a label "diagnosis" of two classes
// drawn at random, independent of everything else (class 1 with
// probability 0.4), missing for every ninth participant; siblings (the
// same Group) share their class.
func withLabel(c *data.Cohort, seed uint64) *data.Cohort {
	rng := rand.New(rand.NewPCG(seed, 7))
	out := *c
	out.Labels = []string{"diagnosis"}
	out.Classes = [][]string{{"control", "patient"}}
	out.Participants = nil
	byGroup := make(map[string]int)
	for i, p := range c.Participants {
		q := *p
		class := 0
		if rng.Float64() < 0.4 {
			class = 1
		}
		if g, ok := byGroup[p.Group]; ok && p.Group != "" {
			class = g
		}
		byGroup[p.Group] = class
		if i%9 == 4 {
			class = -1
		}
		q.Labels = []int{class}
		out.Participants = append(out.Participants, &q)
	}
	return &out
}

// accuracy returns the share of class predictions whose most probable
// class is the observed one (common practice, no source).
func accuracy(cps []model.ClassPrediction) float64 {
	var right int
	for _, cp := range cps {
		if slices.Index(cp.Probabilities, slices.Max(cp.Probabilities)) == cp.Observed {
			right++
		}
	}
	return float64(right) / float64(len(cps))
}

// TestRunLabels: every model learns what its kind can, a participant with
// a known label gets one class prediction per repeat and label, one with
// a missing label none, probabilities sum to 1, fitting the classifiers
// does not change the scores' predictions, and --jobs does not change
// anything.
func TestRunLabels(t *testing.T) {
	mixed := withLabel(toyCohort(40, 6, 1, true), 1)
	labelsOnly := withLabel(toyCohort(40, 6, 1, true), 1)
	labelsOnly.Targets = nil
	for _, p := range labelsOnly.Participants {
		p.Scores = nil
	}
	threeClasses := withLabel(toyCohort(40, 6, 1, true), 1)
	threeClasses.Classes = [][]string{{"a", "b", "c"}}
	for i, p := range threeClasses.Participants {
		if p.Labels[0] >= 0 {
			p.Labels[0] = i % 3
		}
	}
	for _, tc := range []struct {
		name   string
		cohort *data.Cohort
		scores bool
	}{
		{"scores and a label", mixed, true},
		{"a label only", labelsOnly, false},
		{"three classes", threeClasses, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			exp := toyDesign(ridgeAndMean()...)
			var results [2]*Result
			for j, jobs := range []int{1, 2} {
				res, err := (&Runner{Design: exp, Cohort: tc.cohort, Jobs: jobs, newClassifier: newNearestNeighbour}).Run(context.Background())
				if err != nil {
					t.Fatal(err)
				}
				results[j] = res
			}
			res := results[0]
			if !reflect.DeepEqual(res.ClassPredictions, results[1].ClassPredictions) {
				t.Fatal("--jobs 1 and --jobs 2 gave different class predictions")
			}
			known := 0
			for _, p := range tc.cohort.Participants {
				if p.Labels[0] >= 0 {
					known++
				}
			}
			if want := known * *exp.CV.Repeats * len(exp.Models); len(res.ClassPredictions) != want {
				t.Fatalf("%d class predictions, want %d", len(res.ClassPredictions), want)
			}
			for _, cp := range res.ClassPredictions {
				K := len(tc.cohort.Classes[0])
				var sum float64
				for _, p := range cp.Probabilities {
					sum += p
				}
				if cp.Observed < 0 || cp.Observed >= K || len(cp.Probabilities) != K || math.Abs(sum-1) > 1e-12 || cp.Label != "diagnosis" {
					t.Fatalf("class prediction %+v", cp)
				}
			}
			if !tc.scores {
				if len(res.Predictions) != 0 {
					t.Fatalf("%d score predictions for a cohort without scores", len(res.Predictions))
				}
				return
			}
			// The same cohort (whose label stratifies the folds), its
			// models fitted to the scores alone.
			plain, err := (&Runner{Design: exp, Cohort: tc.cohort}).Run(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(res.Predictions, plain.Predictions) || len(plain.ClassPredictions) != 0 {
				t.Fatal("fitting classifiers changed the scores' predictions")
			}
			if len(res.LabelLoss) == 0 {
				t.Fatal("no inner validation log loss for the baselines' classifiers")
			}
		})
	}
}

// TestRunLearnsNothing: a model whose kind learns neither the cohort's
// scores nor its labels is an error naming the model, from Run and from
// Check; so are a label that is also a target and a label no model learns.
func TestRunLearnsNothing(t *testing.T) {
	labelsOnly := withLabel(toyCohort(40, 6, 1, false), 1)
	labelsOnly.Targets = nil
	for _, p := range labelsOnly.Participants {
		p.Scores = nil
	}
	both := withLabel(toyCohort(40, 6, 1, false), 1)
	clash := withLabel(toyCohort(40, 6, 1, false), 1)
	clash.Labels = []string{"alpha"}
	for _, tc := range []struct {
		name   string
		cohort *data.Cohort
		want   []string
	}{
		{"scores-only kinds, labels only", labelsOnly, []string{`model "mean"`, `kind "mean" learns scores only`, "no model learns class labels"}},
		{"scores-only kinds, scores and a label", both, []string{`cohort.labels: no model learns class labels ("diagnosis")`}},
		{"a label that is a target", clash, []string{`cohort.labels: "alpha" is also in cohort.targets`}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			exp := toyDesign(ridgeAndMean()...)
			err := exp.Check(tc.cohort)
			if err == nil {
				t.Fatal("Check passed")
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("Check: %v\nwant it to say %q", err, w)
				}
			}
		})
	}
	_, err := (&Runner{Design: toyDesign(ridgeAndMean()...), Cohort: labelsOnly}).Run(context.Background())
	if err == nil || !strings.Contains(err.Error(), `model "mean"`) {
		t.Fatalf("Run of a model that learns nothing: %v, want an error naming it", err)
	}
}

// TestLabelsNoLeakage: no classifier is fitted on, or validated with, a
// participant of its test fold, and changing the labels of a fold's test
// participants moves no class prediction, to the last bit.
func TestLabelsNoLeakage(t *testing.T) {
	cohort := withLabel(toyCohort(40, 6, 2, false), 2)
	exp := toyDesign(ridgeAndMean()[:1]...)
	var fitted []*nearestNeighbour
	spy := func(ModelConfig, int, int, int64) (model.Classifier, error) {
		m := &nearestNeighbour{}
		fitted = append(fitted, m)
		return m, nil
	}
	base, err := (&Runner{Design: exp, Cohort: cohort, Jobs: 1, newClassifier: spy}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	// Jobs 1: units run in order, each fits its classifier, then the
	// baseline's fresh one for the inner validation log loss.
	if len(fitted) != 2*len(base.Splits) {
		t.Fatalf("%d classifiers for %d splits", len(fitted), len(base.Splits))
	}
	for s, split := range base.Splits {
		for _, i := range split.Test {
			if id := cohort.Participants[i].ID; fitted[2*s].seen[id] || fitted[2*s+1].seen[id] {
				t.Fatalf("repeat %d, fold %d: test participant %s was seen in training", split.Repeat+1, split.Fold+1, id)
			}
		}
	}
	for _, split := range base.Splits {
		changed := withLabel(toyCohort(40, 6, 2, false), 2)
		for _, i := range split.Test {
			if l := &changed.Participants[i].Labels[0]; *l >= 0 {
				*l = 1 - *l
			}
		}
		// The folds of the base run: they are stratified by the label,
		// which this changes.
		res, err := (&Runner{Design: exp, Cohort: changed, Jobs: 1, newClassifier: newNearestNeighbour, splits: base.Splits}).Run(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		for k, cp := range res.ClassPredictions {
			if cp.Repeat == split.Repeat && cp.Fold == split.Fold && !slices.Equal(cp.Probabilities, base.ClassPredictions[k].Probabilities) {
				t.Fatalf("repeat %d, fold %d: changing the test labels moved the prediction for %s", split.Repeat+1, split.Fold+1, cp.ParticipantID)
			}
		}
	}
}

// runLabels cross-validates the nearest-neighbour classifier (5 folds,
// one repeat, no inner validation part).
func runLabels(t *testing.T, c *data.Cohort, seed int64) *Result {
	t.Helper()
	noInner := 0.0
	exp := &Design{Seed: seed, CV: CV{Folds: new(5), Repeats: new(1), InnerValidation: &noInner},
		Models: []ModelConfig{{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}}}}
	exp.SetDefaults()
	res, err := (&Runner{Design: exp, Cohort: c, newClassifier: newNearestNeighbour}).Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// TestNullLabelsStayAtChance: with labels independent of the connectomes
// the cross-validated AUC of a classifier that reads the connectomes
// stays near 0.5, the AUC of guessing (Hanley & McNeil 1982; from
// memory); the bounds are loose on purpose. The accuracy of the nearest
// neighbour's class stays near 0.6² + 0.4² = 0.52 for classes of shares
// 0.6 and 0.4 (common practice, no source).
func TestNullLabelsStayAtChance(t *testing.T) {
	var sumAUC, sumAcc float64
	const seeds = 4
	for s := range seeds {
		c := withLabel(preprocessed(t, synth.Config{N: 120, P: 12, Seed: int64(s + 1), Null: true}), uint64(s+1))
		res := runLabels(t, c, int64(s+1))
		auc, acc := pooledAUC(res.ClassPredictions), accuracy(res.ClassPredictions)
		t.Logf("seed %d: AUC %.3f, accuracy %.3f", s+1, auc, acc)
		if math.Abs(auc-0.5) > 0.15 {
			t.Errorf("null labels, seed %d: AUC %.3f, want near 0.5", s+1, auc)
		}
		sumAUC += auc
		sumAcc += acc
	}
	if mean := sumAUC / seeds; math.Abs(mean-0.5) > 0.08 {
		t.Errorf("null labels: mean AUC %.3f, want near 0.5", mean)
	}
	if mean := sumAcc / seeds; mean > 0.62 {
		t.Errorf("null labels: mean accuracy %.3f, want near 0.52", mean)
	}
}

// pooledAUC returns the AUC of the pooled class predictions (eval.ROCAUC
// of the probability of class 1).
func pooledAUC(cps []model.ClassPrediction) float64 {
	positive := make([]bool, len(cps))
	score := make([]float64, len(cps))
	for i, cp := range cps {
		positive[i], score[i] = cp.Observed == 1, cp.Probabilities[1]
	}
	return eval.ROCAUC(positive, score)
}

// TestLabelPermutationsUniform: on null cohorts, the permutation p-value of
// the pooled AUC, labels permuted and the classifier refitted, is uniform
// (Phipson & Smyth 2010: exact when rows are exchangeable under the null),
// checked with the Kolmogorov–Smirnov test (reject at p < 0.01) over 40
// cohorts of 19 permutations each. Permuted runs see the same splits as
// the observed one and permute the labels with the scores.
func TestLabelPermutationsUniform(t *testing.T) {
	if testing.Short() {
		t.Skip("-short: 40 permutation tests")
	}
	const cohorts, perms = 40, 19
	var ps []float64
	for s := range cohorts {
		seed := int64(s + 1)
		c := withLabel(preprocessed(t, synth.Config{N: 40, P: 8, Seed: seed, Null: true}), uint64(seed))
		noInner := 0.0
		exp := &Design{Seed: seed, CV: CV{Folds: new(4), Repeats: new(1), InnerValidation: &noInner},
			Models: []ModelConfig{{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}}}}
		exp.SetDefaults()
		r := &Runner{Design: exp, Cohort: c, Jobs: 1, newClassifier: newNearestNeighbour}
		res, err := r.Run(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		observed := pooledAUC(res.ClassPredictions)
		null := make([]float64, perms)
		err = r.RunPermutations(context.Background(), Permutations(len(c.Participants), nil, BlocksAuto, perms, uint64(seed)), nil, 1,
			func(run NullRun) error {
				if len(run.ClassPredictions) != len(res.ClassPredictions) || run.ClassPredictions[0].Label != "diagnosis" {
					return fmt.Errorf("permutation %d: %d class predictions of %q", run.Permutation, len(run.ClassPredictions), run.ClassPredictions[0].Label)
				}
				null[run.Permutation] = pooledAUC(run.ClassPredictions)
				return nil
			})
		if err != nil {
			t.Fatal(err)
		}
		ps = append(ps, eval.PermutationPValue(observed, null, false))
	}
	d, p := eval.KSUniform(ps)
	t.Logf("KS D = %.3f, p = %.3f over %d null cohorts", d, p, cohorts)
	if p < 0.01 {
		t.Errorf("permutation p-values of AUC on null cohorts are not uniform: KS D = %.3f, p = %.2g", d, p)
	}
}

// TestSiblingsNeedGroupedFoldsLabels: the sibling test of the scores
// (TestSiblingsNeedGroupedFolds) for a label. Siblings share a class that
// the connectomes do not carry; folds that split families let the
// nearest-neighbour classifier find the sibling, grouped folds keep it at
// chance.
func TestSiblingsNeedGroupedFoldsLabels(t *testing.T) {
	grouped, ungrouped := siblingCohorts(t)
	grouped = withLabel(grouped, 5)
	ungrouped = withLabel(ungrouped, 5)
	for i, p := range ungrouped.Participants { // the same classes, siblings alike
		p.Labels = grouped.Participants[i].Labels
	}
	aucGrouped := pooledAUC(runLabels(t, grouped, 5).ClassPredictions)
	aucUngrouped := pooledAUC(runLabels(t, ungrouped, 5).ClassPredictions)
	t.Logf("AUC: grouped %.3f, ungrouped %.3f", aucGrouped, aucUngrouped)
	if aucGrouped > 0.65 {
		t.Errorf("grouped folds on a null sibling cohort: AUC %.3f, want near 0.5", aucGrouped)
	}
	if aucUngrouped < 0.8 {
		t.Errorf("ungrouped folds gave AUC %.3f: the sibling leak this test guards against did not show", aucUngrouped)
	}
}

// TestLabelsResumeAndMerge: class predictions and the inner log losses of
// a run interrupted and resumed, and of units run one by one and merged
// from their checkpoints, equal those of a single run.
func TestLabelsResumeAndMerge(t *testing.T) {
	cohort := withLabel(toyCohort(40, 6, 3, true), 3)
	exp := toyDesign(ridgeAndMean()...)
	run := func(r *Runner) (*Result, error) {
		r.Design, r.Cohort, r.newClassifier = exp, cohort, newNearestNeighbour
		return r.Run(context.Background())
	}
	whole, err := run(&Runner{Jobs: 1})
	if err != nil {
		t.Fatal(err)
	}
	same := func(what string, got *Result) {
		t.Helper()
		if !reflect.DeepEqual(got.ClassPredictions, whole.ClassPredictions) || !reflect.DeepEqual(got.Predictions, whole.Predictions) {
			t.Fatalf("%s: predictions differ from a single run", what)
		}
		if fmt.Sprint(got.LabelLoss) != fmt.Sprint(whole.LabelLoss) {
			t.Fatalf("%s: inner log losses %v, want %v", what, got.LabelLoss, whole.LabelLoss)
		}
	}

	d := NewCheckpoints(t.TempDir())
	ctx, cancel := context.WithCancel(context.Background())
	r := &Runner{Design: exp, Cohort: cohort, Jobs: 1, Checkpoints: d, newClassifier: newNearestNeighbour,
		OnEvent: func(e Event) {
			if e.Kind == UnitFinished && e.Finished >= 3 {
				cancel()
			}
		}}
	if _, err := r.Run(ctx); !errors.Is(err, context.Canceled) {
		t.Fatalf("interrupted run returned %v, want context.Canceled", err)
	}
	resumed, err := run(&Runner{Jobs: 2, Checkpoints: d})
	if err != nil {
		t.Fatal(err)
	}
	same("resumed run", resumed)

	d = NewCheckpoints(t.TempDir())
	units, err := (&Runner{Design: exp, Cohort: cohort}).Units()
	if err != nil {
		t.Fatal(err)
	}
	for k := range units {
		if _, err := run(&Runner{Checkpoints: d, Select: []int{k}}); err != nil {
			t.Fatal(err)
		}
	}
	merged, err := run(&Runner{Checkpoints: d, FromCheckpoints: true})
	if err != nil {
		t.Fatal(err)
	}
	same("merged units", merged)
}

// TestLoadModelOfMissingFolder: pointing LoadModel at a folder that does
// not exist says so and how models are saved, still wrapping
// fs.ErrNotExist.
func TestLoadModelOfMissingFolder(t *testing.T) {
	_, err := LoadModel(filepath.Join(t.TempDir(), "models", "logistic", "r1-f1"))
	if err == nil || !errors.Is(err, fs.ErrNotExist) || !strings.Contains(err.Error(), "save_models") {
		t.Fatalf("LoadModel of a missing folder: %v", err)
	}
}
