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
