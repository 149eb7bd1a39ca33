package train

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/internal/atomicfile"
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
	Repeat     int             `json:"repeat"` // from 1, as in predictions.csv; 0 when refitted on all participants
	Fold       int             `json:"fold"`   // from 1; 0 when refitted on all participants
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

func saveModel(dir string, m model.Saver, fd *foldData, c *data.Cohort, exp *Design, cfg ModelConfig) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	if err := m.Save(dir); err != nil {
		return err
	}
	f := Fitted{
		Format: "skein-fitted", Version: 1, Model: cfg.Name, Kind: cfg.Kind(),
		Repeat: fd.split.Repeat + 1, Fold: fd.split.Fold + 1,
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
	return atomicfile.WriteFile(filepath.Join(dir, FittedFile), raw)
}

// SavedModel is a trained model read back from a run folder with what was
// fitted beside it.
type SavedModel struct {
	Dir    string
	Fitted Fitted
	Model  model.Regressor
}

// LoadModel reads the saved model in dir (a folder models/NAME/rR-fF or
// models/NAME/all of a run folder).
func LoadModel(dir string) (*SavedModel, error) {
	path := filepath.Join(dir, FittedFile)
	raw, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var f Fitted
	if err := json.Unmarshal(raw, &f); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if f.Format != "skein-fitted" || f.Version != 1 {
		return nil, fmt.Errorf("%s: format %q version %d, want skein-fitted version 1", path, f.Format, f.Version)
	}
	if f.TargetPrep == nil || len(f.TargetPrep.Mean) != len(f.Targets) || len(f.TargetPrep.SD) != len(f.Targets) {
		return nil, fmt.Errorf("%s: target_scaling does not match the %d targets", path, len(f.Targets))
	}
	if len(f.Confounds) > 0 {
		if len(f.ConfoundCoef) != 1+len(f.Confounds) {
			return nil, fmt.Errorf("%s: confound_coef has %d rows, want %d", path, len(f.ConfoundCoef), 1+len(f.Confounds))
		}
		f.TargetPrep.Confounds = mat.NewDense(1+len(f.Confounds), len(f.Targets), nil)
		for i, row := range f.ConfoundCoef {
			if len(row) != len(f.Targets) {
				return nil, fmt.Errorf("%s: confound_coef row %d has %d values, want %d", path, i, len(row), len(f.Targets))
			}
			f.TargetPrep.Confounds.SetRow(i, row)
		}
	}
	k, err := model.Lookup(f.Kind)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if k.Load == nil {
		return nil, fmt.Errorf("%s: models of kind %q are not saved", path, f.Kind)
	}
	sm := &SavedModel{Dir: dir, Fitted: f}
	if sm.Model, err = k.Load(dir); err != nil {
		return nil, err
	}
	return sm, nil
}

// Predict predicts the participants of c, whose matrices must have been
// preprocessed as Fitted.Preprocess says and whose regions must be the
// model's. Row i, column t of the result is target t of participant i in
// score units: the model's standardized prediction turned back into score
// units and, when confounds were regressed out in training, plus the
// training fold's confound fit for the participant's covariates (a missing
// covariate takes its training mean). residual holds the same without the
// confound fit.
func (s *SavedModel) Predict(c *data.Cohort) (score, residual *mat.Dense, err error) {
	f := s.Fitted
	if !slices.Equal(c.Regions, f.Regions) {
		return nil, nil, fmt.Errorf("the cohort's %d regions are not the %d regions the model was trained on (labels and order must match)", len(c.Regions), len(f.Regions))
	}
	var cov *mat.Dense
	if len(f.Confounds) > 0 {
		cov = mat.NewDense(len(c.Participants), len(f.Confounds), nil)
		for k, name := range f.Confounds {
			j := slices.Index(c.Covariates, name)
			if j < 0 {
				return nil, nil, fmt.Errorf("the model regressed out %q, which is not a covariate of the cohort (have %v)", name, c.Covariates)
			}
			for i, p := range c.Participants {
				cov.Set(i, k, p.Covariates[j])
			}
		}
	}
	residual, err = s.Model.Predict(c.Participants)
	if err != nil {
		return nil, nil, err
	}
	f.TargetPrep.Unstandardize(residual)
	score = mat.DenseCopyOf(residual)
	if cov != nil {
		tp := f.TargetPrep
		for i := range c.Participants {
			for t := range f.Targets {
				fit := tp.Confounds.At(0, t)
				for k := range f.Confounds {
					fit += tp.Confounds.At(1+k, t) * tp.covariate(cov, i, k)
				}
				score.Set(i, t, score.At(i, t)+fit)
			}
		}
	}
	return score, residual, nil
}

// Refit trains every model that can be saved on all participants (an inner
// validation part drawn from all of them, as in a fold) and saves it as
// Models/NAME/all/: the model to use on new participants. Its accuracy is
// the cross-validated one of Run; it has no test fold of its own.
func (r *Runner) Refit(ctx context.Context) error {
	if r.Models == "" {
		return errors.New("train: Refit without a Models folder")
	}
	exp, cohort := r.Design, r.Cohort
	y, cov, err := scoresAndConfounds(exp.CV, cohort)
	if err != nil {
		return err
	}
	all := Split{Repeat: -1, Fold: -1}
	for i := range cohort.Participants {
		all.Train = append(all.Train, i)
	}
	fd, err := prepareFold(exp, cohort, all, y, cov, 1)
	if err != nil {
		return fmt.Errorf("refit on all participants: %w", err)
	}
	newModel := r.newModel
	if newModel == nil {
		newModel = buildModel
	}
	for _, cfg := range exp.Models {
		seed := int64(unitSeed(exp.Seed, cfg.Name, -1, -1) >> 1)
		reg, err := newModel(cfg, cohort.P(), len(cohort.Targets), seed)
		if err != nil {
			return err
		}
		saver, ok := reg.(model.Saver)
		if !ok {
			continue
		}
		if err := reg.Fit(ctx, fd.train, fd.valid); err != nil {
			return fmt.Errorf("refit of model %q on all participants: %w", cfg.Name, err)
		}
		dir := filepath.Join(r.Models, filepath.Dir(unitPath(cfg.Name, Unit{})), "all")
		if err := saveModel(dir, saver, fd, cohort, exp, cfg); err != nil {
			return fmt.Errorf("refit of model %q: saving: %w", cfg.Name, err)
		}
	}
	return nil
}
