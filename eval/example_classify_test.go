package eval_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/eval"
)

// Score a classifier's probabilities of an invented diagnosis (class 0
// control, class 1 patient) for eight fictional participants, at the
// threshold 0.5. (The printed values agree with scikit-learn 1.2's
// roc_auc_score, balanced_accuracy_score, accuracy_score, log_loss,
// brier_score_loss, recall_score and confusion_matrix on the same numbers.)
func ExampleScoreClasses() {
	labels := []int{0, 0, 1, 1, 0, 1, 0, 1}
	p1 := []float64{0.1, 0.4, 0.35, 0.8, 0.3, 0.9, 0.6, 0.55}
	proba := mat.NewDense(len(p1), 2, nil)
	for i, p := range p1 {
		proba.Set(i, 0, 1-p)
		proba.Set(i, 1, p)
	}
	s := eval.ScoreClasses(labels, proba, 0.5)
	fmt.Printf("AUC=%.4f balanced accuracy=%.2f accuracy=%.2f\n", s.AUC, s.BalancedAccuracy, s.Accuracy)
	fmt.Printf("log loss=%.4f Brier=%.4f\n", s.LogLoss, s.Brier)
	fmt.Printf("sensitivity=%.2f specificity=%.2f\n", s.Sensitivity, s.Specificity)
	fmt.Println(eval.Confusion(labels, eval.PredictedClasses(proba, 0.5), 2))
	// Output:
	// AUC=0.8125 balanced accuracy=0.75 accuracy=0.75
	// log loss=0.4832 Brier=0.1619
	// sensitivity=0.75 specificity=0.75
	// [[3 1] [1 3]]
}

// A tie between a positive and a negative counts one half: of the four
// pairs of a positive and a negative, three are ordered and one tied, so
// AUC = 3.5/4. (scikit-learn 1.2's roc_auc_score and roc_curve give the
// same; its first threshold is 1.8, max(score) + 1, where skein's is +Inf.)
func ExampleROCAUC() {
	positive := []bool{false, true, false, true}
	score := []float64{0.1, 0.4, 0.4, 0.8}
	fmt.Println(eval.ROCAUC(positive, score))
	fpr, tpr, thresholds := eval.ROCCurve(positive, score)
	fmt.Println(fpr, tpr, thresholds)
	// Output:
	// 0.875
	// [0 0 0.5 1] [0 0.5 1 1] [+Inf 0.8 0.4 0.1]
}

// The majority-class predictor in two test folds of five fictional
// participants, not stratified: fold 1 holds one patient and was trained
// on a sample with more patients, so it gives everyone 0.4; fold 2 holds
// three and gives 0.2. Within each fold every pair is a tie, so AUC within
// folds is exactly 0.5. Pooled, of the 4·6 = 24 pairs of a patient and a
// control, fold 1's patient ties fold 1's four controls (4·½) and ranks
// above fold 2's two (2), and fold 2's three patients rank below fold 1's
// four controls (0) and tie fold 2's two (6·½): AUC = 7/24 (by hand;
// scikit-learn 1.2's roc_auc_score gives the same).
func ExampleAUCWithinFolds() {
	var rows []eval.ClassPrediction
	add := func(fold, class int, p1 float64) {
		rows = append(rows, eval.ClassPrediction{Fold: fold, Observed: class, Probabilities: []float64{1 - p1, p1}})
	}
	for _, c := range []int{0, 0, 0, 0, 1} {
		add(0, c, 0.4)
	}
	for _, c := range []int{0, 0, 1, 1, 1} {
		add(1, c, 0.2)
	}
	labels := make([]int, len(rows))
	proba := mat.NewDense(len(rows), 2, nil)
	for i, r := range rows {
		labels[i] = r.Observed
		proba.SetRow(i, r.Probabilities)
	}
	fmt.Printf("AUC within folds %.4f\n", eval.AUCWithinFolds(rows))
	fmt.Printf("pooled AUC %.4f\n", eval.OneVsRestAUC(labels, proba))
	// Output:
	// AUC within folds 0.5000
	// pooled AUC 0.2917
}
