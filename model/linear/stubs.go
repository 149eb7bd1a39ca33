package linear

import (
	"context"
	"errors"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

var errTODO = errors.New("linear: not implemented yet")

// CPM is connectome-based predictive modelling. (Being written.)
type CPM struct {
	cfg CPMConfig
}

// NewCPM returns an unfitted CPM model.
func NewCPM(cfg CPMConfig) *CPM { return &CPM{cfg: cfg} }

// Fit is being written.
func (c *CPM) Fit(ctx context.Context, train, valid model.Dataset) error { return errTODO }

// Predict is being written.
func (c *CPM) Predict(ps []*data.Participant) (*mat.Dense, error) { return nil, errTODO }
