package experiment

import (
	"encoding/csv"
	"fmt"
	"io"
	"reflect"
	"strconv"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/train"
)

// Predicted are the predictions of a saved fold model for new
// participants (Predict).
type Predicted struct {
	Model   *train.SavedModel
	Cohort  *data.Cohort // the participants predicted, and those excluded
	Targets []string
	// Score and Residual are participants × targets: predictions in score
	// units, and without the training fold's confound fit; nil when the
	// model learnt no scores (Targets empty).
	Score, Residual *mat.Dense
	// Labels are the class labels the model learnt (none for a model of
	// scores alone), Proba the participants × classes probabilities of
	// each, in that order, and Threshold the run's [cv] threshold, at
	// which a binary label's positive class is predicted.
	Labels    []train.FittedLabel
	Proba     []*mat.Dense
	Threshold float64
	// PreprocessDiffers is set when the cohort's experiment file asks for
	// another preprocessing than the model's, which is used.
	PreprocessDiffers bool
}

// Predict predicts the participants of the [cohort] table of the
// experiment file cohortPath (ReadCohortFile: score columns, targets and
// min_participants are not needed; one participant is enough) with the fold
// model saved in modelDir: their matrices are preprocessed as the model's
// were, and the preparation fitted on the model's training participants is
// replayed. A model fitted to scores predicts them (Score, Residual), one
// fitted to class labels their class probabilities (Proba), one fitted to
// both (a network of an experiment with scores and a label) both. Errors
// caused by the input match ErrInput.
func Predict(modelDir, cohortPath string) (*Predicted, error) {
	saved, err := train.LoadModel(modelDir)
	if err != nil {
		return nil, badInput(err)
	}
	exp, err := ReadCohortFile(cohortPath)
	if err != nil {
		return nil, badInput(err)
	}
	pre := saved.Fitted.Preprocess
	cohort, _, err := data.CheckUnscored(exp.Cohort, pre, exp.Dir)
	if err != nil {
		return nil, badInput(err)
	}
	p := &Predicted{Model: saved, Cohort: cohort, Targets: saved.Fitted.Targets, Labels: saved.Fitted.Labels,
		Threshold: saved.Fitted.Threshold, PreprocessDiffers: !reflect.DeepEqual(exp.Preprocess, pre)}
	if len(p.Targets) > 0 {
		if p.Score, p.Residual, err = saved.Predict(cohort); err != nil {
			return nil, badInputf("%s: %w", modelDir, err)
		}
	}
	if p.Proba, err = saved.PredictClasses(cohort); err != nil {
		return nil, badInputf("%s: %w", modelDir, err)
	}
	return p, nil
}

// WriteCSV writes the score predictions as CSV:
// participant_id,model,target,predicted,predicted_residual, one line per
// participant and target (only the header for a model without scores).
func (p *Predicted) WriteCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"participant_id", "model", "target", "predicted", "predicted_residual"})
	for i, q := range p.Cohort.Participants {
		for t, target := range p.Targets {
			cw.Write([]string{q.ID, p.Model.Fitted.Model, target,
				strconv.FormatFloat(p.Score.At(i, t), 'g', -1, 64), strconv.FormatFloat(p.Residual.At(i, t), 'g', -1, 64)})
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("writing predictions: %w", err)
	}
	return nil
}

// WriteClassesCSV writes the class predictions as CSV:
//
//	participant_id,model,target,class,probability,predicted_class
//
// one line per participant, label (target) and class, in the cohort's
// order of participants, the model's order of labels and the label's
// order of classes; probability is printed in the shortest form that
// reads back to the same float64, and predicted_class, the same on every
// line of a participant and label, names the class predicted: for two
// classes the second (positive) one when its probability is at least
// Threshold, for more the most probable (eval.PredictedClasses).
func (p *Predicted) WriteClassesCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"participant_id", "model", "target", "class", "probability", "predicted_class"})
	predicted := make([][]int, len(p.Labels))
	for l := range p.Labels {
		predicted[l] = eval.PredictedClasses(p.Proba[l], p.Threshold)
	}
	for i, q := range p.Cohort.Participants {
		for l, label := range p.Labels {
			for k, class := range label.Classes {
				cw.Write([]string{q.ID, p.Model.Fitted.Model, label.Name, class,
					strconv.FormatFloat(p.Proba[l].At(i, k), 'g', -1, 64), label.Classes[predicted[l][i]]})
			}
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("writing class predictions: %w", err)
	}
	return nil
}
