package eval

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// nullRun simulates k-fold cross-validation of a model that knows nothing:
// it predicts each test fold's participants the training fold's mean score
// plus noise independent of everything. Returns its prediction rows.
func nullRun(rng *rand.Rand, n, k int, noise float64) []Prediction {
	y := make([]float64, n)
	for i := range y {
		y[i] = 50 + 10*rng.NormFloat64()
	}
	perm := rng.Perm(n)
	var rows []Prediction
	for f := 0; f < k; f++ {
		var sum float64
		var m int
		for j, i := range perm {
			if j%k != f {
				sum += y[i]
				m++
			}
		}
		for j, i := range perm {
			if j%k == f {
				rows = append(rows, Prediction{ParticipantID: fmt.Sprint(i), Fold: f, Observed: y[i],
					Predicted: sum/float64(m) + noise*rng.NormFloat64()})
			}
		}
	}
	return rows
}

// Under no association, pooled r is biased below 0 by the folds' training
// means, while r within folds is not. (A property of k-fold
// cross-validation derived in PearsonWithinFolds's doc comment; common
// practice, no source.)
func TestPearsonWithinFoldsUnbiasedUnderNull(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	const runs = 400
	var pooled, within float64
	for range runs {
		rows := nullRun(rng, 40, 5, 0.5)
		obs, pred, _ := CompletePairs(obsOf(rows), predOf(rows))
		pooled += Pearson(obs, pred) / runs
		within += PearsonWithinFolds(rows) / runs
	}
	// The SD of one run's r is about 1/√40 ≈ 0.16, so the mean of 400
	// runs has an SD of about 0.008.
	t.Logf("mean over %d null runs: pooled r %.3f, r within folds %.3f", runs, pooled, within)
	if pooled > -0.05 {
		t.Errorf("mean pooled r %.3f under the null; want the known negative bias (below −0.05)", pooled)
	}
	if math.Abs(within) > 0.03 {
		t.Errorf("mean r within folds %.3f under the null; want 0 within 0.03", within)
	}
}

func TestPearsonWithinFoldsEdgeCases(t *testing.T) {
	one := []Prediction{{Fold: 0, Observed: 1, Predicted: 2}, {Fold: 0, Observed: 2, Predicted: 2.5}, {Fold: 0, Observed: 4, Predicted: 3}}
	if got, want := PearsonWithinFolds(one), Pearson(obsOf(one), predOf(one)); math.Abs(got-want) > 1e-15 {
		t.Errorf("one fold: r within folds %v, Pearson %v; want equal", got, want)
	}
	constant := []Prediction{{Fold: 0, Observed: 1, Predicted: 5}, {Fold: 0, Observed: 3, Predicted: 5},
		{Fold: 1, Observed: 2, Predicted: 7}, {Fold: 1, Observed: 6, Predicted: 7}}
	if got := PearsonWithinFolds(constant); !math.IsNaN(got) {
		t.Errorf("predictions constant within each fold: r within folds %v, want NaN", got)
	}
}

// aucWithinFixture is testdata/eval/auc_within.json, made by
// make_auc_within.py from scikit-learn 1.2's roc_auc_score of each fold
// and the folds' numbers of pairs.
type aucWithinFixture map[string]struct {
	Classes int `json:"classes"`
	Rows    []struct {
		ID       string    `json:"id"`
		Repeat   int       `json:"repeat"`
		Fold     int       `json:"fold"`
		Observed int       `json:"observed"`
		P        []float64 `json:"p"`
	} `json:"rows"`
	AUCWithin float64 `json:"auc_within"`
	PooledAUC float64 `json:"pooled_auc"`
}

// TestAUCWithinFoldsSklearn: AUCWithinFolds against scikit-learn, formed
// by make_auc_within.py as Σ_f roc_auc_score_f · n₊_f·n₋_f / Σ_f n₊_f·n₋_f
// over the folds holding both classes (the macro one-vs-rest mean of that
// for three classes): a binary label in 2 repeats × 3 unstratified folds
// plus a fold of a single class, which adds no pair; three classes; and a
// single fold, where it is roc_auc_score itself.
func TestAUCWithinFoldsSklearn(t *testing.T) {
	raw, err := os.ReadFile("../testdata/eval/auc_within.json")
	if err != nil {
		t.Fatal(err)
	}
	var fx aucWithinFixture
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"binary", "three_classes", "single_fold"} {
		c, ok := fx[name]
		if !ok {
			t.Fatalf("auc_within.json has no case %q", name)
		}
		rows := make([]ClassPrediction, len(c.Rows))
		labels := make([]int, len(c.Rows))
		proba := mat.NewDense(len(c.Rows), c.Classes, nil)
		for i, r := range c.Rows {
			rows[i] = ClassPrediction{ParticipantID: r.ID, Model: "net", Label: "dx", Repeat: r.Repeat, Fold: r.Fold,
				Observed: r.Observed, Probabilities: r.P}
			labels[i] = r.Observed
			proba.SetRow(i, r.P)
		}
		if got := AUCWithinFolds(rows); math.Abs(got-c.AUCWithin) > 1e-12 {
			t.Errorf("%s: AUC within folds %v, scikit-learn %v", name, got, c.AUCWithin)
		}
		if got := OneVsRestAUC(labels, proba); math.Abs(got-c.PooledAUC) > 1e-12 {
			t.Errorf("%s: pooled AUC %v, scikit-learn %v", name, got, c.PooledAUC)
		}
	}
}

// majorityRun simulates k-fold cross-validation, not stratified, of a
// label of prevalence prev that nothing predicts: each test fold's
// participants get the probability of class 1 that the training fold's
// class frequency gives (the majority-class predictor's), plus noise
// independent of everything (none for noise = 0).
func majorityRun(rng *rand.Rand, n, k int, prev, noise float64) []ClassPrediction {
	y := make([]int, n)
	for i := range y {
		if rng.Float64() < prev {
			y[i] = 1
		}
	}
	perm := rng.Perm(n)
	var rows []ClassPrediction
	for f := range k {
		var pos, m int
		for j, i := range perm {
			if j%k != f {
				pos += y[i]
				m++
			}
		}
		for j, i := range perm {
			if j%k == f {
				p := float64(pos)/float64(m) + noise*rng.NormFloat64()
				rows = append(rows, ClassPrediction{ParticipantID: fmt.Sprint(i), Fold: f, Observed: y[i],
					Probabilities: []float64{1 - p, p}})
			}
		}
	}
	return rows
}

// pooledAUC is OneVsRestAUC of all rows at once.
func pooledAUC(rows []ClassPrediction) float64 {
	y, p := classRows(rows, seq(len(rows)))
	return OneVsRestAUC(y, p)
}

func seq(n int) []int {
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	return idx
}

// TestAUCWithinFoldsMajority: the majority-class predictor, constant
// within each fold, ties every pair of a fold and gets exactly 0.5 (the
// definition: a tie counts 1/2), while its pooled AUC is below 0.5 by the
// anti-correlation of training and test class frequencies (the bias
// derived in AUCWithinFolds's doc comment; common practice, no source).
// Measured here: mean pooled AUC 0.407 over 50 runs.
func TestAUCWithinFoldsMajority(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	var pooled float64
	const runs = 50
	for r := range runs {
		rows := majorityRun(rng, 140, 5, 0.3, 0)
		if got := AUCWithinFolds(rows); got != 0.5 {
			t.Fatalf("run %d: majority predictor's AUC within folds %v, want exactly 0.5", r, got)
		}
		pooled += pooledAUC(rows) / runs
	}
	t.Logf("majority predictor, 140 participants, 5 unstratified folds, prevalence 0.3: mean pooled AUC %.3f over %d runs", pooled, runs)
	if pooled > 0.45 {
		t.Errorf("mean pooled AUC of the majority predictor %.3f; want the known bias below 0.5 (under 0.45)", pooled)
	}
}

// Under no association (the majority predictor's probabilities plus
// independent noise, SD 0.05, in 5 unstratified folds of 60 participants,
// prevalence 0.3), pooled AUC is biased below 0.5 and AUC within folds is
// not. Measured here: over 400 runs the mean pooled AUC is 0.418 and the
// mean AUC within folds 0.496; the SD of one run's AUC within folds is
// about 0.08 (about 150 pairs in five folds, Hanley & McNeil 1982, from
// memory), so that of the mean of 400 about 0.004.
func TestAUCWithinFoldsUnbiasedUnderNull(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	const runs = 400
	var pooled, within float64
	for range runs {
		rows := majorityRun(rng, 60, 5, 0.3, 0.05)
		pooled += pooledAUC(rows) / runs
		within += AUCWithinFolds(rows) / runs
	}
	t.Logf("mean over %d null runs: pooled AUC %.3f, AUC within folds %.3f", runs, pooled, within)
	if pooled > 0.47 {
		t.Errorf("mean pooled AUC %.3f under the null; want the known bias below 0.5 (under 0.47)", pooled)
	}
	if math.Abs(within-0.5) > 0.015 {
		t.Errorf("mean AUC within folds %.3f under the null; want 0.5 within 0.015", within)
	}
}

func TestAUCWithinFoldsEdgeCases(t *testing.T) {
	p := func(p1 float64) []float64 { return []float64{1 - p1, p1} }
	oneClassPerFold := []ClassPrediction{{Fold: 0, Observed: 1, Probabilities: p(0.9)}, {Fold: 0, Observed: 1, Probabilities: p(0.2)},
		{Fold: 1, Observed: 0, Probabilities: p(0.1)}}
	if got := AUCWithinFolds(oneClassPerFold); !math.IsNaN(got) {
		t.Errorf("no fold holds both classes: AUC within folds %v, want NaN", got)
	}
	if got := AUCWithinFolds(nil); !math.IsNaN(got) {
		t.Errorf("no rows: AUC within folds %v, want NaN", got)
	}
	// Three folds of one pair each: concordant in folds 0 and 1 of repeat
	// 0, a tie in repeat 1's fold 0; a missing class and a NaN probability
	// are skipped. (3 pairs, 2.5 concordant: by hand.) Pooled, the pair
	// (0.3 positive, 0.4 negative) across folds would be discordant.
	mixed := []ClassPrediction{
		{Fold: 0, Observed: 1, Probabilities: p(0.6)}, {Fold: 0, Observed: 0, Probabilities: p(0.4)},
		{Fold: 1, Observed: 1, Probabilities: p(0.3)}, {Fold: 1, Observed: 0, Probabilities: p(0.2)},
		{Repeat: 1, Fold: 0, Observed: 1, Probabilities: p(0.5)}, {Repeat: 1, Fold: 0, Observed: 0, Probabilities: p(0.5)},
		{Repeat: 1, Fold: 0, Observed: -1, Probabilities: p(0.9)}, {Repeat: 1, Fold: 0, Observed: 0, Probabilities: p(math.NaN())},
	}
	if got := AUCWithinFolds(mixed); math.Abs(got-2.5/3) > 1e-15 {
		t.Errorf("by-hand folds: AUC within folds %v, want 2.5/3", got)
	}
}
