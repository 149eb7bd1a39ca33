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
