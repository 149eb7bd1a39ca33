package model

// A Prediction is one test prediction of a cross-validated run: the score
// a model predicted for one participant while that participant was in the
// test fold. It is one row of a run's predictions.csv.
type Prediction struct {
	ParticipantID string
	Model         string
	Target        string
	Repeat        int // repeat of the cross-validation, from 0 (files and messages count from 1)
	Fold          int // test fold within the repeat, from 0 (files and messages count from 1)
	// Observed is the participant's score in score units, with the
	// training fold's confound fit removed when confounds are regressed out.
	Observed float64
	// Predicted is the model's prediction on the same scale; NaN when the
	// model gave none.
	Predicted float64
}
