package train

import (
	"encoding/json"
	"fmt"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// A Prep is one step of the preparation of a fold: a transform of the
// participants whose parameters are learned from the training
// participants of the fold alone (Fit) and then applied, unchanged, to
// any participants (Apply): the training part itself, its inner
// validation part, the test fold, and new participants of skein predict.
// Learning nothing from the test fold is what keeps it out of the fit.
//
// A step transforms either the participants' matrices (an input step,
// such as a per-edge standardization of the connectomes) or their scores
// (a TargetStep). Fit may read everything about the training
// participants: matrices, scores and covariates. Apply of an input step
// never reads the scores, so that what a model sees of a participant
// does not depend on the participant's scores. No step changes a
// participant's ID, group or covariates, nor the cohort's names (targets,
// covariates, regions).
//
// A fitted step is saved as its JSON encoding (encoding/json) and read
// back by decoding into a new value of its type (see Pipeline): the
// encoding holds everything Apply, and Invert for a TargetStep, use.
type Prep interface {
	// Name is the step's name in saved files and messages. It names the
	// step's type: decoding a saved step makes the type from its name.
	Name() string
	// Fit learns the step's parameters from train, the training
	// participants of a fold as the steps before it leave them. It does
	// not modify train.
	Fit(train *data.Cohort) error
	// Apply returns c transformed by the fitted step: a cohort with the
	// same names and one new Participant per participant of c, in order.
	// It never modifies c or what c points to; the result may share with
	// c what the step leaves unchanged (matrices, covariates), which
	// callers therefore do not modify either. A participant without
	// scores (as in a cohort to predict) keeps none.
	Apply(c *data.Cohort) (*data.Cohort, error)
}

// A TargetStep is a Prep that transforms the scores, and nothing else.
// Models learn the scores, and predict them, on the scale the last
// TargetStep of a Pipeline leaves them; Invert maps predictions back.
type TargetStep interface {
	Prep
	// Invert maps pred, predictions for the participants of c on the
	// step's output scale (a row per participant, a column per target),
	// onto the step's input scale, in place: Invert applied to the scores
	// Apply returns gives back, to rounding, the scores Apply was given.
	// It reads of c only what no step changes (covariates and names), so
	// c may hold the participants as any step of a Pipeline leaves them.
	Invert(c *data.Cohort, pred *mat.Dense) error
}

// A Residualizer is a TargetStep that removes from the scores a part the
// models are not asked to predict, such as the part that confounds
// explain. Predictions are scored against the scores with that part
// removed, in score units (Residual, Unscale); Invert, which adds the
// part back, states them as scores.
type Residualizer interface {
	TargetStep
	// Residual returns the scores of c, as the step's Apply would be
	// given them, with the removed part subtracted and nothing else
	// changed: a row per participant, a column per target, NaN where a
	// score is missing.
	Residual(c *data.Cohort) (*mat.Dense, error)
	// Unscale maps pred, predictions for the participants of c on the
	// step's output scale, onto the scale of Residual, in place. Invert
	// is Unscale followed by adding the removed part back.
	Unscale(c *data.Cohort, pred *mat.Dense) error
}

// A Pipeline is the whole preparation of a fold: steps fitted in order,
// each on the training participants as the steps before it leave them,
// and applied in the same order. Models learn and predict on the scale of
// its output. With R the last Residualizer among the steps, predictions
// are scored on the scale of R's Residual (Observed, Unscale); without
// one, in score units. Invert maps predictions to score units. The zero
// Pipeline leaves participants as they are.
//
// A Pipeline is encoded in JSON as the list of its steps,
//
//	[{"step": NAME, "params": PARAMS}, ...]
//
// with NAME a step's Name and PARAMS the step's own JSON encoding.
// Decoding knows the steps of this package by name: "targets" is a
// TargetPrep, "edges" an EdgeScaler, "combat" a Harmonizer, "tangent" a
// TangentSpace.
type Pipeline struct {
	Steps []Prep
}

// Fit fits every step in order on train, each on the participants as
// the steps before it leave them. It does not modify train.
func (p *Pipeline) Fit(train *data.Cohort) error {
	cur := train
	for k, s := range p.Steps {
		if err := s.Fit(cur); err != nil {
			return fmt.Errorf("%s: %w", s.Name(), err)
		}
		if k < len(p.Steps)-1 {
			var err error
			if cur, err = s.Apply(cur); err != nil {
				return fmt.Errorf("%s: %w", s.Name(), err)
			}
		}
	}
	return nil
}

// Apply returns c transformed by every step in order (see Prep.Apply).
func (p *Pipeline) Apply(c *data.Cohort) (*data.Cohort, error) {
	return p.applyFirst(len(p.Steps), c)
}

// applyFirst returns c transformed by the first k steps.
func (p *Pipeline) applyFirst(k int, c *data.Cohort) (*data.Cohort, error) {
	out := *c
	out.Participants = make([]*data.Participant, len(c.Participants))
	for i, q := range c.Participants {
		copied := *q
		out.Participants[i] = &copied
	}
	cur := &out
	for _, s := range p.Steps[:k] {
		var err error
		if cur, err = s.Apply(cur); err != nil {
			return nil, fmt.Errorf("%s: %w", s.Name(), err)
		}
	}
	return cur, nil
}

// Observed returns what predictions for the participants of c (as given
// to Apply) are scored against: their scores on the scale of the last
// Residualizer's Residual, or as they are without one. A row per
// participant, a column per target, NaN where a score is missing.
func (p *Pipeline) Observed(c *data.Cohort) (*mat.Dense, error) {
	r := p.lastResidualizer()
	if r < 0 {
		return scoreMatrix(c, len(c.Targets))
	}
	in, err := p.applyFirst(r, c)
	if err != nil {
		return nil, err
	}
	res, err := p.Steps[r].(Residualizer).Residual(in)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", p.Steps[r].Name(), err)
	}
	return res, nil
}

// Unscale maps pred, predictions for the participants of c on the scale
// of the pipeline's output, onto the scale of Observed, in place: through
// the TargetSteps after the last Residualizer, last first, and that
// Residualizer's Unscale. c holds the participants at any stage of the
// pipeline (steps leave covariates alone).
func (p *Pipeline) Unscale(c *data.Cohort, pred *mat.Dense) error {
	r := p.lastResidualizer()
	if err := p.invertAfter(r, c, pred); err != nil {
		return err
	}
	if r >= 0 {
		if err := p.Steps[r].(Residualizer).Unscale(c, pred); err != nil {
			return fmt.Errorf("%s: %w", p.Steps[r].Name(), err)
		}
	}
	return nil
}

// Invert maps pred, predictions for the participants of c on the scale of
// the pipeline's output, onto score units, in place: through every
// TargetStep's Invert, last first. c is as for Unscale.
func (p *Pipeline) Invert(c *data.Cohort, pred *mat.Dense) error {
	return p.invertAfter(-1, c, pred)
}

// invertAfter inverts the TargetSteps after step k, last first.
func (p *Pipeline) invertAfter(k int, c *data.Cohort, pred *mat.Dense) error {
	for j := len(p.Steps) - 1; j > k; j-- {
		if ts, ok := p.Steps[j].(TargetStep); ok {
			if err := ts.Invert(c, pred); err != nil {
				return fmt.Errorf("%s: %w", ts.Name(), err)
			}
		}
	}
	return nil
}

// lastResidualizer returns the index of the last Residualizer, or −1.
func (p *Pipeline) lastResidualizer() int {
	for k := len(p.Steps) - 1; k >= 0; k-- {
		if _, ok := p.Steps[k].(Residualizer); ok {
			return k
		}
	}
	return -1
}

// savedStep is the JSON encoding of one step of a Pipeline.
type savedStep struct {
	Step   string          `json:"step"`
	Params json.RawMessage `json:"params"`
}

// MarshalJSON encodes p as the list of its steps (see Pipeline).
func (p *Pipeline) MarshalJSON() ([]byte, error) {
	steps := make([]savedStep, len(p.Steps))
	for k, s := range p.Steps {
		raw, err := json.Marshal(s)
		if err != nil {
			return nil, fmt.Errorf("step %d (%s): %w", k+1, s.Name(), err)
		}
		steps[k] = savedStep{Step: s.Name(), Params: raw}
	}
	return json.Marshal(steps)
}

// UnmarshalJSON decodes what MarshalJSON encodes into p. An unknown step
// name is an error naming the step.
func (p *Pipeline) UnmarshalJSON(raw []byte) error {
	var steps []savedStep
	if err := json.Unmarshal(raw, &steps); err != nil {
		return err
	}
	p.Steps = make([]Prep, len(steps))
	for k, saved := range steps {
		var s Prep
		switch saved.Step {
		case targetPrepName:
			s = new(TargetPrep)
		case edgeScalerName:
			s = new(EdgeScaler)
		case harmonizerName:
			s = new(Harmonizer)
		case tangentName:
			s = new(TangentSpace)
		default:
			return fmt.Errorf("step %d: unknown preparation step %q (this skein knows %q, %q, %q and %q)", k+1, saved.Step, targetPrepName, edgeScalerName, harmonizerName, tangentName)
		}
		if err := json.Unmarshal(saved.Params, s); err != nil {
			return fmt.Errorf("step %d (%s): %w", k+1, saved.Step, err)
		}
		p.Steps[k] = s
	}
	return nil
}

// subCohort returns the participants idx of c under c's names.
func subCohort(c *data.Cohort, idx []int) *data.Cohort {
	return &data.Cohort{Participants: pick(c, idx), Targets: c.Targets, Covariates: c.Covariates, Labels: c.Labels, Classes: c.Classes,
		Regions: c.Regions, SiteColumn: c.SiteColumn, Series: c.Series}
}

// scoreMatrix returns the scores of c's participants, len × T; every
// participant must have T scores.
func scoreMatrix(c *data.Cohort, T int) (*mat.Dense, error) {
	if len(c.Participants) == 0 || T == 0 {
		return nil, fmt.Errorf("%d participants and %d targets", len(c.Participants), T)
	}
	y := mat.NewDense(len(c.Participants), T, nil)
	for i, p := range c.Participants {
		if len(p.Scores) != T {
			return nil, fmt.Errorf("participant %s has %d scores, want %d", p.ID, len(p.Scores), T)
		}
		y.SetRow(i, p.Scores)
	}
	return y, nil
}

// covariateMatrix returns the named covariates of c's participants, one
// column per name.
func covariateMatrix(c *data.Cohort, names []string) (*mat.Dense, error) {
	cols := make([]int, len(names))
	for k, name := range names {
		if cols[k] = slices.Index(c.Covariates, name); cols[k] < 0 {
			return nil, fmt.Errorf("covariate %q is not in the cohort (covariates: %s)", name, wordList(c.Covariates))
		}
	}
	cov := mat.NewDense(len(c.Participants), len(names), nil)
	for i, p := range c.Participants {
		for k, j := range cols {
			cov.Set(i, k, p.Covariates[j])
		}
	}
	return cov, nil
}
