package model

import (
	"context"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// A LabelledSet is a set of participants with the class each belongs to:
// what a Classifier learns from.
type LabelledSet struct {
	Participants []*data.Participant
	// Classes is the number of classes K ≥ 2 of the label.
	Classes int
	// Labels holds one class in [0, K) per participant. The caller leaves
	// out participants whose label is missing.
	Labels []int
}

// Len returns the number of participants.
func (s LabelledSet) Len() int { return len(s.Participants) }

// A Classifier is one model kind fitted to a categorical target (a class
// label such as a diagnosis). As for a Regressor, the runner calls Fit once
// on a training fold and then PredictProba on the matching test fold; it
// never shows a classifier the test fold before PredictProba.
type Classifier interface {
	// Fit learns from train. valid, which may hold no participants, is the
	// inner validation part of the same training fold (early stopping for
	// a network; a model that chooses its settings by inner
	// cross-validation may use the two together).
	Fit(ctx context.Context, train, valid LabelledSet) error
	// PredictProba returns len(ps) × K class probabilities: row i holds
	// the probability of each class for ps[i], and sums to 1.
	PredictProba(ps []*data.Participant) (*mat.Dense, error)
}

// ClassInterpreter is implemented by classifiers that can say which edges
// drive their class predictions, as an Interpreter does for scores. What
// a map explains is a decision value of the classifier, a function of the
// participant that is linear in the model's last layer and free of the
// additive constant a softmax ignores:
//
//   - K = 2: one decision value, the log-odds of the positive class 1,
//     s = log(p₁/p₀) (the logit of a binary logistic model, z₁ − z₀ for
//     a softmax of logits z);
//   - K > 2: one decision value per class c, its centred log-probability
//     s_c = log p_c − (1/K) Σⱼ log pⱼ = z_c − z̄ (the centred log-ratio of
//     the probabilities; z the logits or linear functions of a softmax).
//
// A map's sign says whether the edge, at its value, raises or lowers the
// decision value: the odds of class 1 for a binary label, class c's
// probability against the geometric mean of all for more classes.
type ClassInterpreter interface {
	Classifier
	// EdgeImportance returns p × p symmetric maps of the importance of
	// each edge (i, j) for the decision values of ps, averaged over ps:
	// ExplainedClasses(K) maps per importance view (Kind.ImportanceViews),
	// view after view, the map of view v and decision value c at index
	// v·ExplainedClasses(K) + c (ExplainedClass names c's class). As for
	// Interpreter, a kind whose importance is a statistic over ps returns
	// an error wrapping ErrTooFewToExplain when ps is too small for it.
	EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error)
}

// A ReferenceClassInterpreter is a ClassInterpreter whose importance can be
// measured from reference inputs, as a ReferenceInterpreter's is, for a
// kind whose inputs are transformed before it sees them
// (Kind.EdgeScaling).
type ReferenceClassInterpreter interface {
	ClassInterpreter
	// EdgeImportanceFrom is EdgeImportance with each input of ps[i]
	// measured from the same input of ref[i]; EdgeImportance is
	// EdgeImportanceFrom with reference inputs of 0.
	EdgeImportanceFrom(ps, ref []*data.Participant) ([]*mat.Dense, error)
}

// ExplainedClasses returns how many decision values a ClassInterpreter
// explains for a label of K ≥ 2 classes: 1 for K = 2 (the log-odds of
// class 1), K otherwise (one per class).
func ExplainedClasses(K int) int {
	if K == 2 {
		return 1
	}
	return K
}

// ExplainedClass returns the class whose decision value map c of a
// ClassInterpreter explains, for a label of K classes: class 1 (the
// positive class) for K = 2, class c otherwise.
func ExplainedClass(K, c int) int {
	if K == 2 {
		return 1
	}
	return c
}
