package model

// A ClassPrediction is what a Classifier gave one participant of a label
// when that participant was in the test fold: the probability of each
// class. It is the counterpart of Prediction for a categorical target.
type ClassPrediction struct {
	ParticipantID string
	Model         string
	// Label names the categorical target (data.Cohort.Labels).
	Label  string
	Repeat int // repeat of the cross-validation, from 0
	Fold   int // test fold within the repeat, from 0
	// Observed is the participant's class, an index into the label's
	// classes (data.Cohort.Classes); never missing, since participants
	// without the label are left out of its test folds.
	Observed int
	// Probabilities holds K class probabilities, in class order, summing
	// to 1.
	Probabilities []float64
}
