package data

import "gonum.org/v1/gonum/mat"

// Preprocess says how each participant's matrices are transformed after
// loading: the [preprocess] table of an experiment file. Every step works on
// one participant's matrix alone, so none can leak across folds.
// (Placeholder; the preprocessing work fills it.)
type Preprocess struct{}

// SetDefaults fills every unset field with its documented default.
func (p *Preprocess) SetDefaults() {}

// Validate reports the first setting that cannot work, naming its key.
func (p Preprocess) Validate() error { return nil }

// Functional transforms a p × p functional matrix in place.
func (p Preprocess) Functional(m *mat.Dense) error { return nil }

// Structural transforms a p × p structural matrix in place.
func (p Preprocess) Structural(m *mat.Dense) error { return nil }
