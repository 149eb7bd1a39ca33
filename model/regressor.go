package model

import (
	"context"
	"errors"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// Dataset is a set of participants with the scores a model learns from.
type Dataset struct {
	Participants []*data.Participant
	// Y is len(Participants) × T. Row i holds participant i's targets as the
	// model should learn them, already standardized or residualized by the
	// caller; NaN marks a missing score, which must add nothing to the fit.
	Y *mat.Dense
}

// Len returns the number of participants.
func (d Dataset) Len() int { return len(d.Participants) }

// A Regressor is one model kind. The runner calls Fit once on a training
// fold and then Predict on the matching test fold; it never shows a model
// the test fold before Predict.
type Regressor interface {
	// Fit learns from train. valid, which may hold no participants, is the
	// inner validation part of the same training fold: a network trains on
	// train and stops early on valid, while a model that chooses its
	// settings by inner cross-validation may use the two together.
	Fit(ctx context.Context, train, valid Dataset) error
	// Predict returns len(ps) × T predictions, on the scale of the Y that
	// the model was fitted on.
	Predict(ps []*data.Participant) (*mat.Dense, error)
}

// ColumnWise is implemented by regressors that fit each column of Y
// independently of the others and fit many columns for little more than
// the cost of one (ridge, kernel ridge: one decomposition serves every
// column). A kind whose regressors are ColumnWise declares it
// (Kind.ColumnWise), and the permutation test then stacks permuted scores
// as extra columns of Y instead of refitting once per permutation.
type ColumnWise interface {
	Regressor
	FitsColumnsIndependently()
}

// Epoch is what an iteratively trained model reports after each epoch.
type Epoch struct {
	Epoch     int     // 1-based
	TrainLoss float64 // mean training loss over the epoch
	ValidLoss float64 // loss on the inner validation set; NaN without one
	Best      bool    // whether this epoch is the best so far on ValidLoss
	// Member is 0 for a single model; for a model that trains several
	// members and averages them (an ensemble), the 1-based member whose
	// epoch this is. Each member has its own epochs 1, 2, … and its own
	// Best epoch.
	Member int
}

// Iterative is implemented by regressors that train in epochs.
type Iterative interface {
	Regressor
	// OnEpoch sets a function called after every epoch of the next Fit.
	OnEpoch(func(Epoch))
	// History returns the epochs of the last Fit; for an ensemble, those
	// of member 1, then of member 2, and so on (Epoch.Member).
	History() []Epoch
}

// ErrDiverged is wrapped by the error of a Fit whose loss became NaN,
// infinite or exploded; the wrapping error names the epoch.
var ErrDiverged = errors.New("model: training diverged")

// Interpreter is implemented by regressors that can say which edges drive
// their predictions: gradient × input saliency for networks, activation
// patterns for linear models (Haufe et al. 2014).
type Interpreter interface {
	Regressor
	// EdgeImportance returns one p × p symmetric map per target: the
	// importance of each edge (i, j) for the predictions of ps, averaged
	// over ps; for a kind with several importance views
	// (Kind.ImportanceViews), one map per view and target, view after
	// view. The runner calls it on each fitted model with its test fold.
	// A kind whose importance is a statistic over ps (a covariance) returns
	// an error wrapping ErrTooFewToExplain when ps is too small for it;
	// the runner then keeps no map for that fold.
	EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error)
}

// ErrTooFewToExplain is wrapped by an Interpreter's error when the
// participants it was given are too few for its importance measure, such
// as the single test participant of a leave-one-out fold for a
// covariance.
var ErrTooFewToExplain = errors.New("too few participants for edge importance")

// A ReferenceInterpreter is an Interpreter whose importance can be
// measured from reference inputs, for a kind whose inputs are transformed
// before it sees them (model.Kind.EdgeScaling).
type ReferenceInterpreter interface {
	Interpreter
	// EdgeImportanceFrom is EdgeImportance with each input of ps[i]
	// measured from the same input of ref[i] (gradient × (input −
	// reference)); EdgeImportance is EdgeImportanceFrom with reference
	// inputs of 0. ref holds one participant per participant of ps.
	EdgeImportanceFrom(ps, ref []*data.Participant) ([]*mat.Dense, error)
}

// Saver is implemented by regressors that can be written to a folder and
// read back (see each kind's package documentation for its format).
type Saver interface {
	Regressor
	Save(dir string) error
}

// A Choice is a setting that a model chose on its training fold, for one
// target, from a grid of candidate values by inner cross-validation, such
// as the penalty of ridge regression from its alphas grid.
type Choice struct {
	// Setting is the experiment key of the grid inside the model's kind
	// table, such as "alphas".
	Setting string
	// Value is the chosen value, as written in the grid.
	Value float64
	// Min and Max are the smallest and the largest value of the grid.
	// A grid of one value gives Min = Max = Value.
	Min, Max float64
}

// AtEdge reports whether Value is the smallest or the largest value of a
// grid of at least two distinct values: Min < Max and Value ∈ {Min, Max}.
// A choice at the edge says the best value may lie outside the grid; a
// grid of one value chooses nothing and is never at its edge.
func (c Choice) AtEdge() bool {
	return c.Min < c.Max && (c.Value == c.Min || c.Value == c.Max)
}

// Tuned is implemented by regressors that choose settings from grids by
// inner cross-validation on their training fold.
type Tuned interface {
	Regressor
	// Choices returns, for each target (column of the Y of the last Fit),
	// the choices made for it, one per grid, in the order of the model's
	// settings; nil before Fit. The caller must not modify the result.
	Choices() [][]Choice
}
