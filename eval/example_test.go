package eval_test

import (
	"fmt"
	"math"
	"os"
	"strings"

	"github.com/skein-neuro/skein/eval"
)

// Score a model's predictions of an invented attention score for eight
// fictional participants; one prediction is missing. (The printed values
// agree with scipy.stats and scikit-learn on the same numbers.)
func ExampleScore() {
	observed := []float64{12, 15, 9, 20, 17, 11, 14, 18}
	predicted := []float64{13, 14, 11, 17, 18, 10, math.NaN(), 16}
	s := eval.Score(observed, predicted, 4)
	fmt.Printf("n=%d missing=%d\n", s.N, s.Missing)
	fmt.Printf("r=%.3f rho=%.3f MAE=%.3f RMSE=%.3f R2=%.3f NMI=%.3f\n",
		s.Pearson, s.Spearman, s.MAE, s.RMSE, s.R2, s.NMI)
	// Output:
	// n=7 missing=1
	// r=0.907 rho=0.857 MAE=1.571 RMSE=1.732 R2=0.785 NMI=0.853
}

func ExamplePearson() {
	// Set I of Anscombe's quartet (Anscombe 1973).
	x := []float64{10, 8, 13, 9, 11, 14, 6, 4, 12, 7, 5}
	y := []float64{8.04, 6.95, 7.58, 8.81, 8.33, 9.96, 7.24, 4.26, 10.84, 4.82, 5.68}
	fmt.Printf("%.3f\n", eval.Pearson(x, y))
	// Output: 0.816
}

// Summarize a small predictions file, pooled and per fold, and write the
// JSON of metrics.json.
func ExampleSummarize() {
	csv := `participant_id,model,target,repeat,fold,observed,predicted
sub-01,ridge,attention,1,1,12,13
sub-02,ridge,attention,1,1,15,14
sub-03,ridge,attention,1,1,9,11
sub-04,ridge,attention,1,2,20,17
sub-05,ridge,attention,1,2,17,18
sub-06,ridge,attention,1,2,11,10
`
	rows, header, err := eval.ReadPredictions(strings.NewReader(csv), "predictions.csv")
	if err != nil {
		fmt.Println(err)
		return
	}
	s := eval.Summarize(rows, 2, header.HasFolds())
	g := s.Groups[0]
	fmt.Printf("%s %s: pooled MAE %.3f, fold MAE %.3f ± %.3f over %d folds\n",
		g.Model, g.Target, g.Pooled.MAE, g.FoldMean.MAE, g.FoldSD.MAE, len(g.Folds))
	// Output: ridge attention: pooled MAE 1.500, fold MAE 1.500 ± 0.236 over 2 folds
}

func ExamplePermutationPValue() {
	observedR := 0.31
	nullR := []float64{0.02, -0.11, 0.35, 0.07, -0.04, 0.12, -0.2, 0.09, 0.01, -0.06}
	fmt.Printf("p = %.3f\n", eval.PermutationPValue(observedR, nullR, eval.MetricPearson.LowerIsBetter()))
	// Output: p = 0.182
}

func ExampleReadPredictions_error() {
	_, _, err := eval.ReadPredictions(strings.NewReader("observed,predicted\n12,thirteen\n"), "scores.csv")
	fmt.Fprintln(os.Stdout, err)
	// Output: scores.csv: line 2, column 2 ("predicted"): expected a number (or empty, NaN or NA for a missing value), found "thirteen"
}
