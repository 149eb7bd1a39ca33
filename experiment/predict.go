package experiment

import (
	"encoding/csv"
	"fmt"
	"io"
	"reflect"
	"strconv"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/train"
	"gonum.org/v1/gonum/mat"
)

// Predicted are the predictions of a saved fold model for new
// participants (Predict).
type Predicted struct {
	Model   *train.SavedModel
	Cohort  *data.Cohort // the participants predicted, and those excluded
	Targets []string
	// Score and Residual are participants × targets: predictions in score
	// units, and without the training fold's confound fit.
	Score, Residual *mat.Dense
	// PreprocessDiffers is set when the cohort's experiment file asks for
	// another preprocessing than the model's, which is used.
	PreprocessDiffers bool
}

// Predict predicts the participants of the [cohort] table of the
// experiment file cohortPath (ReadCohortFile: score columns, targets and
// min_participants are not needed; one participant is enough) with the fold
// model saved in modelDir: their matrices are preprocessed as the model's
// were, and the preparation fitted on the model's training participants is
// replayed. Errors caused by the input match ErrInput.
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
	score, residual, err := saved.Predict(cohort)
	if err != nil {
		return nil, badInputf("%s: %w", modelDir, err)
	}
	return &Predicted{Model: saved, Cohort: cohort, Targets: saved.Fitted.Targets, Score: score, Residual: residual,
		PreprocessDiffers: !reflect.DeepEqual(exp.Preprocess, pre)}, nil
}

// WriteCSV writes the predictions as CSV:
// participant_id,model,target,predicted,predicted_residual, one line per
// participant and target.
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
