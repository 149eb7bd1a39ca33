package linear

import (
	"context"
	"errors"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

var errTODO = errors.New("linear: not implemented yet")

// Ridge is ridge regression on connectome edges. (Being written.)
type Ridge struct {
	cfg  RidgeConfig
	seed int64
}

// NewRidge returns an unfitted ridge model; seed drives its inner folds.
func NewRidge(cfg RidgeConfig, seed int64) *Ridge { return &Ridge{cfg: cfg, seed: seed} }

// FitsColumnsIndependently marks Ridge as a model.ColumnWise.
func (*Ridge) FitsColumnsIndependently() {}

// Fit is being written.
func (r *Ridge) Fit(ctx context.Context, train, valid model.Dataset) error { return errTODO }

// Predict is being written.
func (r *Ridge) Predict(ps []*data.Participant) (*mat.Dense, error) { return nil, errTODO }

// KernelRidge is kernel ridge regression between participants. (Being written.)
type KernelRidge struct {
	cfg  KernelRidgeConfig
	seed int64
}

// NewKernelRidge returns an unfitted kernel ridge model; seed drives its
// inner folds.
func NewKernelRidge(cfg KernelRidgeConfig, seed int64) *KernelRidge {
	return &KernelRidge{cfg: cfg, seed: seed}
}

// FitsColumnsIndependently marks KernelRidge as a model.ColumnWise.
func (*KernelRidge) FitsColumnsIndependently() {}

// Fit is being written.
func (k *KernelRidge) Fit(ctx context.Context, train, valid model.Dataset) error { return errTODO }

// Predict is being written.
func (k *KernelRidge) Predict(ps []*data.Participant) (*mat.Dense, error) { return nil, errTODO }

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
