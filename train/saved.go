package train

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// FittedFile is the file beside each saved fold model that holds what was
// fitted on its training fold besides the model itself.
const FittedFile = "fitted.json"

// Fitted is the JSON document FittedFile: what prediction with a saved
// model needs beyond the model's own files. Predictions of the model are
// standardized residual scores; score = prediction·SD + mean (+ the
// confound fit when Confounds is set).
type Fitted struct {
	Format     string          `json:"format"` // "skein-fitted"
	Version    int             `json:"version"`
	Model      string          `json:"model"`
	Kind       string          `json:"kind"`
	Repeat     int             `json:"repeat"` // from 0
	Fold       int             `json:"fold"`   // from 0
	Targets    []string        `json:"targets"`
	Regions    []string        `json:"regions"`
	Confounds  []string        `json:"confounds"`
	Preprocess data.Preprocess `json:"preprocess"`
	// ConfoundCoef holds the (1 + C) × T confound coefficients row by
	// row, intercept first; empty without confounds.
	ConfoundCoef [][]float64 `json:"confound_coef,omitempty"`
	TargetPrep   *TargetPrep `json:"target_scaling"`
	// Train lists the participants the model was fitted on (training part
	// minus inner validation) and Valid the inner validation part.
	Train []string `json:"train"`
	Valid []string `json:"valid"`
}

func saveModel(dir string, m model.Saver, fd *foldData, c *data.Cohort, exp *Experiment, cfg ModelConfig) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	if err := m.Save(dir); err != nil {
		return err
	}
	f := Fitted{
		Format: "skein-fitted", Version: 1, Model: cfg.Name, Kind: cfg.Kind(),
		Repeat: fd.split.Repeat, Fold: fd.split.Fold,
		Targets: c.Targets, Regions: c.Regions, Confounds: exp.CV.Confounds, Preprocess: exp.Preprocess,
		TargetPrep: fd.prep,
	}
	if fd.prep.Confounds != nil {
		r, _ := fd.prep.Confounds.Dims()
		for i := 0; i < r; i++ {
			f.ConfoundCoef = append(f.ConfoundCoef, fd.prep.Confounds.RawRowView(i))
		}
	}
	for _, p := range fd.train.Participants {
		f.Train = append(f.Train, p.ID)
	}
	for _, p := range fd.valid.Participants {
		f.Valid = append(f.Valid, p.ID)
	}
	raw, err := json.MarshalIndent(f, "", "  ")
	if err != nil {
		return fmt.Errorf("%s: %w", FittedFile, err)
	}
	return writeAtomic(filepath.Join(dir, FittedFile), raw)
}
