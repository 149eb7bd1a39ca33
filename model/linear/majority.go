package linear

import (
	"context"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// Majority is the majority-class predictor: for every participant it
// predicts the class frequencies of the training participants (train and
// valid together), P(class k) = n_k/n, whatever their connectomes. Its
// most probable class is the majority class; its ROC AUC is 0.5 and its
// log loss the entropy of the training frequencies on a test fold drawn
// like them. It is the floor every classifier must beat, as Mean is for
// scores (scikit-learn's DummyClassifier(strategy="prior")).
type Majority struct {
	classes int
	freq    []float64 // K; nil before Fit
}

// NewMajority returns an unfitted majority-class predictor for a label of
// classes classes.
func NewMajority(classes int) *Majority { return &Majority{classes: classes} }

// Fit counts the classes of train and valid together.
func (m *Majority) Fit(_ context.Context, train, valid model.LabelledSet) error {
	_, labels, err := joinLabelled(train, valid, m.classes, "model."+kindMajority)
	if err != nil {
		return err
	}
	m.freq = make([]float64, m.classes)
	for _, y := range labels {
		m.freq[y]++
	}
	for k := range m.freq {
		m.freq[k] /= float64(len(labels))
	}
	return nil
}

// PredictProba returns len(ps) × K probabilities, every row the training
// class frequencies.
func (m *Majority) PredictProba(ps []*data.Participant) (*mat.Dense, error) {
	if m.freq == nil {
		return nil, errNotFitted
	}
	if len(ps) == 0 {
		return nil, errNoParticipants
	}
	out := mat.NewDense(len(ps), m.classes, nil)
	for i := range ps {
		out.SetRow(i, m.freq)
	}
	return out, nil
}

// Frequencies returns the training class frequencies n_k/n (nil before
// Fit). The caller must not modify the result.
func (m *Majority) Frequencies() []float64 { return m.freq }
