package train

import "github.com/skein-neuro/skein/data"

// A Design is what a Runner needs to cross-validate models on a cohort:
// the seed, the cross-validation scheme, the models, and what to keep
// beyond the predictions. An experiment file holds one (see package
// experiment).
type Design struct {
	// Seed drives every random choice: splits, inner validation parts,
	// initial weights, minibatches, dropout.
	Seed int64
	// CV is the cross-validation scheme.
	CV CV
	// Models are the models cross-validated on the same splits.
	Models []ModelConfig
	// SaveModels keeps each fold's model under Runner.Models.
	SaveModels bool
	// InnerLoss records, for every baseline unit with an inner validation
	// part, the error of the baseline refitted without that part and
	// scored on it (Result.InnerLoss): what a reference baseline is chosen
	// on when the experiment names none.
	InnerLoss bool
	// LabelLoss records, for every unit of a baseline fitted to class
	// labels with an inner validation part, the log loss of the
	// baseline's classifier refitted without that part and scored on it
	// (Result.LabelLoss): what a label's reference baseline is chosen on
	// when the experiment names none that classifies.
	LabelLoss bool
	// Preprocess is how the cohort's matrices were prepared, recorded
	// beside every saved model so that new participants are prepared
	// alike.
	Preprocess data.Preprocess
}

// SetDefaults fills every unset field of the cross-validation scheme and
// the models with its documented default.
func (d *Design) SetDefaults() {
	d.CV.SetDefaults()
	for i := range d.Models {
		d.Models[i].SetDefaults()
	}
}
