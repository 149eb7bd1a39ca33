package train

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/internal/atomicfile"
	"github.com/skein-neuro/skein/model"
)

// FittedFile is the file beside each saved fold model that holds what was
// fitted on its training fold besides the model itself.
const FittedFile = "fitted.json"

// FittedVersion is the version of FittedFile this skein writes. Version
// 1, written by earlier skeins, held the target preparation as the keys
// confounds, confound_coef and target_scaling instead of prep; version 2
// had no labels and always a regressor. LoadModel reads all three.
const FittedVersion = 3

// LabelsFolder is the folder, below a saved model's folder, that holds
// the model's classifiers: one folder per class label, named after the
// label (FolderName), in the format of the kind's Save.
const LabelsFolder = "labels"

// Fitted is the JSON document FittedFile: what prediction with a saved
// model needs beyond the model's own files. The model learned, and
// predicts, participants as Prep leaves them; Prep.Invert turns its
// predictions into scores, Prep.Unscale into scores with the confound
// fit removed (what the run scored).
//
// A model fitted to scores has its regressor's files in the folder itself
// and Targets names their columns; a model fitted to class labels has one
// classifier per label in LabelsFolder/LABEL and Labels lists them. A
// network of an experiment with scores and a label has both; a classifying
// baseline such as logistic has labels only (Targets empty).
type Fitted struct {
	Format  string `json:"format"`  // "skein-fitted"
	Version int    `json:"version"` // FittedVersion
	Model   string `json:"model"`
	Kind    string `json:"kind"`
	Repeat  int    `json:"repeat"` // from 1, as in predictions.csv; 0 when refitted on all participants
	Fold    int    `json:"fold"`   // from 1; 0 when refitted on all participants
	// Targets names the score columns the regressor predicts, in order;
	// empty when no regressor was saved.
	Targets []string `json:"targets"`
	// Labels lists the class labels whose classifiers were saved, in the
	// cohort's order; absent when none were.
	Labels []FittedLabel `json:"labels,omitempty"`
	// Threshold is the run's [cv] threshold (CV.Threshold): a participant
	// is predicted the positive class of a binary label when its
	// probability is at least Threshold. Set when Labels is.
	Threshold  float64         `json:"threshold,omitempty"`
	Regions    []string        `json:"regions"`
	Preprocess data.Preprocess `json:"preprocess"`
	// Prep is the preparation fitted on the fold's training participants
	// (a JSON list of steps, see Pipeline).
	Prep *Pipeline `json:"prep"`
	// Train lists the participants the model was fitted on (training part
	// minus inner validation) and Valid the inner validation part.
	Train []string `json:"train"`
	Valid []string `json:"valid"`
}

// A FittedLabel is a class label that a saved model's classifier learnt.
type FittedLabel struct {
	Name string `json:"name"`
	// Classes names the label's classes in index order: the columns of
	// the classifier's probabilities. For two, Classes[1] is the positive
	// class.
	Classes []string `json:"classes"`
}

// labelDir returns the folder of the classifier of label in the saved
// model's folder dir.
func labelDir(dir, label string) string {
	return filepath.Join(dir, LabelsFolder, FolderName(label))
}

// saveModel saves in dir what model cfg fitted on fold fd: reg, when it
// is a model.Saver, and each classifier of classifiers (one per label of
// c) that has a Save method (as model.Saver's) and a kind with
// LoadClassifier, each in its labelDir; then FittedFile, written
// last, so that a folder with FittedFile holds a whole model. It writes
// nothing when there is nothing to save.
func saveModel(dir string, reg model.Regressor, classifiers []model.Classifier, fd *foldData, c *data.Cohort, exp *Design, cfg ModelConfig) error {
	f := Fitted{
		Format: "skein-fitted", Version: FittedVersion, Model: cfg.Name, Kind: cfg.Kind(),
		Repeat: fd.split.Repeat + 1, Fold: fd.split.Fold + 1,
		Targets: []string{}, Regions: c.Regions, Preprocess: exp.Preprocess,
		Prep: fd.prep,
	}
	if saver, ok := reg.(model.Saver); ok {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			return err
		}
		if err := saver.Save(dir); err != nil {
			return err
		}
		f.Targets = c.Targets
	}
	k, err := cfg.Spec()
	if err != nil {
		return err
	}
	for l, clf := range classifiers {
		saver, ok := clf.(interface{ Save(dir string) error })
		if !ok || k.LoadClassifier == nil {
			continue
		}
		if err := saver.Save(labelDir(dir, c.Labels[l])); err != nil {
			return fmt.Errorf("label %s: %w", c.Labels[l], err)
		}
		f.Labels = append(f.Labels, FittedLabel{Name: c.Labels[l], Classes: c.Classes[l]})
		f.Threshold = 0.5 // CV.SetDefaults's default, for a Design not filled
		if t := exp.CV.Threshold; t != nil {
			f.Threshold = *t
		}
	}
	if len(f.Targets) == 0 && len(f.Labels) == 0 {
		return nil
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
	// Model is the regressor of the scores Fitted.Targets names; nil when
	// the model learnt no scores.
	Model model.Regressor
	// Classifiers holds the classifier of each label of Fitted.Labels,
	// in that order.
	Classifiers []model.Classifier
}

// LoadModel reads the saved model in dir (a folder models/NAME/rR-fF or
// models/NAME/all of a run folder), whose FittedFile may be of version 1
// to FittedVersion: its regressor, when Fitted.Targets names scores, and
// the classifier of each label of Fitted.Labels from its folder below
// LabelsFolder.
//
// A folder without FittedFile is an error that says what the folder holds
// instead, when it is a model's folder (models/NAME: its fold folders, and
// all/ when the model was refitted on all participants), the models
// folder of a run, or a member of a saved ensemble.
func LoadModel(dir string) (*SavedModel, error) {
	path := filepath.Join(dir, FittedFile)
	raw, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		if advice := modelFolderAdvice(dir); advice != "" {
			return nil, fmt.Errorf("%s: %w (no %s): %s", dir, ErrNotModelFolder, FittedFile, advice)
		}
		if _, statErr := os.Stat(dir); errors.Is(statErr, fs.ErrNotExist) {
			return nil, fmt.Errorf("%s: no saved model here (a run saves its models with [output] save_models = true): %w", dir, err)
		}
	}
	if err != nil {
		return nil, err
	}
	var head struct {
		Format  string `json:"format"`
		Version int    `json:"version"`
	}
	if err := json.Unmarshal(raw, &head); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if head.Format != "skein-fitted" || head.Version < 1 || head.Version > FittedVersion {
		return nil, fmt.Errorf("%s: format %q version %d, want skein-fitted version 1 to %d", path, head.Format, head.Version, FittedVersion)
	}
	var f Fitted
	if head.Version == 1 {
		f, err = readFittedV1(raw)
	} else if err = json.Unmarshal(raw, &f); err == nil && f.Prep == nil {
		err = errors.New("no prep")
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	k, err := model.Lookup(f.Kind)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if len(f.Targets) == 0 && len(f.Labels) == 0 {
		return nil, fmt.Errorf("%s: names neither targets nor labels", path)
	}
	sm := &SavedModel{Dir: dir, Fitted: f}
	if len(f.Targets) > 0 {
		if k.Load == nil {
			return nil, fmt.Errorf("%s: regressors of kind %q are not saved", path, f.Kind)
		}
		if sm.Model, err = k.Load(dir); err != nil {
			return nil, err
		}
	}
	for _, l := range f.Labels {
		if len(l.Classes) < 2 {
			return nil, fmt.Errorf("%s: label %q has %d classes, want at least 2", path, l.Name, len(l.Classes))
		}
		if k.LoadClassifier == nil {
			return nil, fmt.Errorf("%s: label %q: classifiers of kind %q are not saved", path, l.Name, f.Kind)
		}
		clf, err := k.LoadClassifier(labelDir(dir, l.Name))
		if err != nil {
			return nil, fmt.Errorf("%s: classifier of label %q: %w", dir, l.Name, err)
		}
		sm.Classifiers = append(sm.Classifiers, clf)
	}
	if len(f.Labels) > 0 && !(f.Threshold > 0 && f.Threshold < 1) {
		return nil, fmt.Errorf("%s: threshold %v, want a probability between 0 and 1", path, f.Threshold)
	}
	return sm, nil
}

// ErrNotModelFolder is wrapped by LoadModel's error for a folder that
// holds saved models below it rather than one model.
var ErrNotModelFolder = errors.New("not a saved model's folder")

// modelFolderAdvice says which saved models dir holds, as a sentence for
// a person pointing LoadModel at the wrong level; "" when it holds none.
func modelFolderAdvice(dir string) string {
	if up := filepath.Dir(filepath.Dir(dir)); filepath.Base(filepath.Dir(dir)) == LabelsFolder {
		if _, err := os.Stat(filepath.Join(up, FittedFile)); err == nil {
			return fmt.Sprintf("it is the classifier of label %s saved with the model in %s; pass that folder, which predicts every label it learnt", filepath.Base(dir), up)
		}
	}
	if _, err := os.Stat(filepath.Join(filepath.Dir(dir), FittedFile)); err == nil {
		return fmt.Sprintf("it is a member of the ensemble saved in %s; pass that folder, whose prediction is the members' mean", filepath.Dir(dir))
	}
	folds, refit := savedBelow(dir)
	if len(folds) > 0 || refit {
		var b strings.Builder
		if len(folds) > 0 {
			fmt.Fprintf(&b, "it holds the fold models %s (each trained on one training fold of the cross-validation); pass one of them, such as %s",
				listNames(folds), filepath.Join(dir, folds[0]))
		}
		if refit {
			if b.Len() > 0 {
				b.WriteString(", or ")
			}
			fmt.Fprintf(&b, "%s, the model refitted on all participants, which is the one to use for new participants", filepath.Join(dir, refitFolder))
		} else {
			b.WriteString(`; for new participants, a model refitted on all participants is better: run the experiment with [output] refit = true to save it as ` + filepath.Join(dir, refitFolder))
		}
		return b.String()
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return ""
	}
	var models []string
	for _, e := range entries {
		if folds, refit := savedBelow(filepath.Join(dir, e.Name())); e.IsDir() && (len(folds) > 0 || refit) {
			models = append(models, e.Name())
		}
	}
	if len(models) == 0 {
		return ""
	}
	return fmt.Sprintf("it is a run's models folder, holding the saved models %s; pass a fold folder such as %s, or %s when the model was refitted",
		listNames(models), filepath.Join(dir, models[0], "r1-f1"), filepath.Join(dir, models[0], refitFolder))
}

// refitFolder is the folder of a model refitted on all participants.
const refitFolder = "all"

// savedBelow returns the fold folders (rR-fF, in repeat and fold order)
// of dir that hold a FittedFile, and whether its refitFolder does.
func savedBelow(dir string) (folds []string, refit bool) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil, false
	}
	type fold struct {
		name string
		r, f int
	}
	var found []fold
	for _, e := range entries {
		if _, err := os.Stat(filepath.Join(dir, e.Name(), FittedFile)); !e.IsDir() || err != nil {
			continue
		}
		var r, f int
		if n, _ := fmt.Sscanf(e.Name(), "r%d-f%d", &r, &f); n == 2 && e.Name() == fmt.Sprintf("r%d-f%d", r, f) {
			found = append(found, fold{e.Name(), r, f})
		} else if e.Name() == refitFolder {
			refit = true
		}
	}
	slices.SortFunc(found, func(a, b fold) int {
		if a.r != b.r {
			return a.r - b.r
		}
		return a.f - b.f
	})
	for _, f := range found {
		folds = append(folds, f.name)
	}
	return folds, refit
}

// listNames joins names with commas, eliding the middle of a long list.
func listNames(names []string) string {
	if len(names) > 8 {
		return fmt.Sprintf("%s, ... %s (%d in all)", strings.Join(names[:3], ", "), strings.Join(names[len(names)-2:], ", "), len(names))
	}
	return strings.Join(names, ", ")
}

// readFittedV1 reads a FittedFile of version 1 into the Fitted of today:
// its keys confounds, confound_coef and target_scaling make a Pipeline of
// one TargetPrep.
func readFittedV1(raw []byte) (Fitted, error) {
	var v1 struct {
		Fitted
		Confounds     []string    `json:"confounds"`
		ConfoundCoef  [][]float64 `json:"confound_coef"`
		TargetScaling *struct {
			CovariateMean []float64 `json:"covariate_mean"`
			Mean          []float64 `json:"mean"`
			SD            []float64 `json:"sd"`
		} `json:"target_scaling"`
	}
	if err := json.Unmarshal(raw, &v1); err != nil {
		return Fitted{}, err
	}
	ts := v1.TargetScaling
	if ts == nil || len(ts.Mean) != len(v1.Targets) {
		return Fitted{}, fmt.Errorf("target_scaling does not match the %d targets", len(v1.Targets))
	}
	j := targetPrepJSON{Covariates: v1.Confounds, Blocks: 1, ConfoundCoef: v1.ConfoundCoef,
		CovariateMean: ts.CovariateMean, Mean: ts.Mean, SD: ts.SD}
	tp, err := j.targetPrep()
	if err != nil {
		return Fitted{}, fmt.Errorf("version 1 target preparation: %w", err)
	}
	f := v1.Fitted
	f.Prep = &Pipeline{Steps: []Prep{tp}}
	return f, nil
}

// prepare checks that the participants of c have the model's regions and
// returns them as the fitted preparation (Fitted.Prep) leaves them, with
// the site columns of a site confound added first.
func (s *SavedModel) prepare(c *data.Cohort) (*data.Cohort, error) {
	f := s.Fitted
	if !slices.Equal(c.Regions, f.Regions) {
		return nil, fmt.Errorf("the cohort's %d regions are not the %d regions the model was trained on (labels and order must match)", len(c.Regions), len(f.Regions))
	}
	for _, step := range f.Prep.Steps {
		if tp, ok := step.(*TargetPrep); ok && tp.SiteLevels != nil {
			var err error
			if c, err = AddSiteColumns(c, tp.SiteLevels); err != nil {
				return nil, err
			}
		}
	}
	prepared, err := f.Prep.Apply(c)
	if err != nil {
		return nil, fmt.Errorf("preparation: %w", err)
	}
	return prepared, nil
}

// Predict predicts the scores of the participants of c, whose matrices
// must have been preprocessed as Fitted.Preprocess says and whose regions
// must be the model's. It applies Fitted.Prep to c, predicts with the
// model and maps the predictions back: row i, column t of score is target
// t of participant i in score units (Pipeline.Invert: the standardization
// undone and, when confounds were regressed out in training, the training
// fold's confound fit for the participant's covariates added, a missing
// covariate taking its training mean); residual holds the same without
// the confound fit (Pipeline.Unscale). A model that learnt no scores
// (Model nil) is an error.
func (s *SavedModel) Predict(c *data.Cohort) (score, residual *mat.Dense, err error) {
	f := s.Fitted
	if s.Model == nil {
		return nil, nil, fmt.Errorf("%s: the model learnt no scores, only the labels %s", s.Dir, fittedLabelNames(f.Labels))
	}
	prepared, err := s.prepare(c)
	if err != nil {
		return nil, nil, err
	}
	score, err = s.Model.Predict(prepared.Participants)
	if err != nil {
		return nil, nil, err
	}
	if _, cols := score.Dims(); cols != len(f.Targets) {
		return nil, nil, fmt.Errorf("the model predicts %d targets, %s names %d", cols, FittedFile, len(f.Targets))
	}
	residual = mat.DenseCopyOf(score)
	if err := f.Prep.Unscale(prepared, residual); err != nil {
		return nil, nil, fmt.Errorf("preparation: %w", err)
	}
	if err := f.Prep.Invert(prepared, score); err != nil {
		return nil, nil, fmt.Errorf("preparation: %w", err)
	}
	return score, residual, nil
}

// PredictClasses predicts the classes of the participants of c, prepared
// as for Predict, with the classifier of each label of Fitted.Labels: one
// n × K matrix per label, in that order, row i holding the probability of
// each class (in the order of FittedLabel.Classes) for participant i, the
// row summing to 1. It returns nil for a model that learnt no labels.
func (s *SavedModel) PredictClasses(c *data.Cohort) ([]*mat.Dense, error) {
	if len(s.Classifiers) == 0 {
		return nil, nil
	}
	prepared, err := s.prepare(c)
	if err != nil {
		return nil, err
	}
	out := make([]*mat.Dense, len(s.Classifiers))
	for l, clf := range s.Classifiers {
		label := s.Fitted.Labels[l]
		if out[l], err = predictProba(clf, prepared.Participants, len(label.Classes)); err != nil {
			return nil, fmt.Errorf("label %s: %w", label.Name, err)
		}
	}
	return out, nil
}

// fittedLabelNames lists the names of labels for a message.
func fittedLabelNames(labels []FittedLabel) string {
	names := make([]string, len(labels))
	for i, l := range labels {
		names[i] = l.Name
	}
	return wordList(names)
}

// Refit trains every model that can be saved on all participants (an
// inner validation part drawn from all of them, as in a fold), for the
// scores and the labels it learns, and saves it as Models/NAME/all/
// (saveModel): the model to use on new participants. Its accuracy is the
// cross-validated one of Run; it has no test fold of its own.
func (r *Runner) Refit(ctx context.Context) error {
	if r.Models == "" {
		return errors.New("train: Refit without a Models folder")
	}
	exp, cohort := withSiteConfound(r.Design, r.Cohort)
	if _, _, err := scoresAndConfounds(exp.CV, cohort); err != nil {
		return err
	}
	all := Split{Repeat: -1, Fold: -1}
	for i := range cohort.Participants {
		all.Train = append(all.Train, i)
	}
	shared, err := prepareFold(exp, cohort, all, 1)
	if err != nil {
		return fmt.Errorf("refit on all participants: %w", err)
	}
	newModel := r.newModel
	if newModel == nil {
		newModel = buildModel
	}
	seed := modelSeed(exp.Seed, -1, -1)
	for _, cfg := range exp.Models {
		scores, labels, err := r.learns(cfg)
		if err != nil {
			return err
		}
		k, err := cfg.Spec()
		if err != nil {
			return err
		}
		// Only what can be saved is refitted.
		scores = scores && (k.Load != nil || r.newModel != nil)
		labels = labels && k.LoadClassifier != nil
		if !scores && !labels {
			continue
		}
		fd, err := shared.forModel(cfg)
		if err != nil {
			return fmt.Errorf("refit of model %q on all participants: %w", cfg.Name, err)
		}
		var reg model.Regressor
		if scores {
			if reg, err = newModel(cfg, cohort.P(), len(cohort.Targets), seed); err != nil {
				return err
			}
			if err := reg.Fit(ctx, fd.train, fd.valid); err != nil {
				return fmt.Errorf("refit of model %q on all participants: %w", cfg.Name, err)
			}
		}
		var classifiers []model.Classifier
		if labels {
			for l, label := range fd.labelName {
				K := len(fd.classes[l])
				clf, err := r.buildClassifier(cfg, K, seed)
				if err != nil {
					return fmt.Errorf("refit of model %q, label %s: %w", cfg.Name, label, err)
				}
				if err := clf.Fit(ctx, labelled(fd.train.Participants, l, K), labelled(fd.valid.Participants, l, K)); err != nil {
					return fmt.Errorf("refit of model %q on all participants, label %s: %w", cfg.Name, label, err)
				}
				classifiers = append(classifiers, clf)
			}
		}
		dir := filepath.Join(r.Models, filepath.Dir(unitPath(cfg.Name, Unit{})), refitFolder)
		if err := saveModel(dir, reg, classifiers, fd, cohort, exp, cfg); err != nil {
			return fmt.Errorf("refit of model %q: saving: %w", cfg.Name, err)
		}
	}
	return nil
}
