package linear

import (
	"context"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// Mean is the mean predictor: it predicts, for every participant, the
// mean of each score column over the training participants whose score
// is present (train and valid together). It is the floor every model must
// beat.
type Mean struct {
	means []float64 // per column; nil before Fit
}

// NewMean returns an unfitted mean predictor.
func NewMean() *Mean { return &Mean{} }

// FitsColumnsIndependently marks Mean as a model.ColumnWise.
func (*Mean) FitsColumnsIndependently() {}

// Fit computes the mean of each column of Y over its present rows. A
// column with no score present is an error.
func (m *Mean) Fit(ctx context.Context, train, valid model.Dataset) error {
	_, y, err := joinDatasets(train, valid)
	if err != nil {
		return err
	}
	pats, err := missingPatterns(y, 1)
	if err != nil {
		return err
	}
	_, t := y.Dims()
	m.means = make([]float64, t)
	for _, pat := range pats {
		for _, j := range pat.cols {
			var sum float64
			for _, i := range pat.rows {
				sum += y.At(i, j)
			}
			m.means[j] = sum / float64(len(pat.rows))
		}
	}
	return nil
}

// Predict returns len(ps) × T predictions, each row the training means.
func (m *Mean) Predict(ps []*data.Participant) (*mat.Dense, error) {
	if m.means == nil {
		return nil, errNotFitted
	}
	if len(ps) == 0 {
		return nil, errNoParticipants
	}
	out := mat.NewDense(len(ps), len(m.means), nil)
	for i := range ps {
		out.SetRow(i, m.means)
	}
	return out, nil
}

// Means returns the fitted mean of each column (nil before Fit).
func (m *Mean) Means() []float64 { return m.means }
