package eval

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
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
