package experiment

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/train"
)

// Experiment is one experiment file: the cohort and its preprocessing, the
// models to compare, the cross-validation and the seed.
type Experiment struct {
	// Name names the experiment's run folders, runs/NAME-YYYYMMDD-HHMMSS,
	// when skein run is given no --out; "" (the default) takes the name
	// from the file (RunName). It must be usable as a folder name: no
	// path separator, not starting with a dot.
	Name string `toml:"name,omitempty"`
	// Seed drives every random choice of the run: splits, initial
	// weights, minibatches, dropout and permutations.
	Seed int64 `toml:"seed"`
	// Cohort says where the files are ([cohort]).
	Cohort data.Source `toml:"cohort"`
	// Preprocess says how each matrix is transformed ([preprocess]).
	Preprocess data.Preprocess `toml:"preprocess"`
	// train.CV is the cross-validation scheme ([cv]).
	CV train.CV `toml:"cv"`
	// Models lists the models to compare ([[model]]).
	Models []train.ModelConfig `toml:"model"`
	// Permutation is the permutation test ([permutation]).
	Permutation Permutation `toml:"permutation"`
	// Output says what a run keeps besides its predictions ([output]).
	Output Output `toml:"output"`
	// Drift is the rule a rerun is held to against an earlier run ([drift]).
	Drift Drift `toml:"drift"`
	// SampleSize asks for the sample-size curve ([sample_size]).
	SampleSize SampleSize `toml:"sample_size"`
	// Comparison says which baseline the models are compared with
	// ([comparison]).
	Comparison Comparison `toml:"comparison"`
	// Sweeps vary settings of models ([[sweep]]); Expand turns them into
	// models.
	Sweeps []Sweep `toml:"sweep,omitempty"`

	// Dir is the folder of the experiment file; relative paths in the file
	// are taken from it. It is not read from the file.
	Dir string `toml:"-"`
}

// Output says what a run keeps besides its predictions: the [output]
// table of an experiment file.
type Output struct {
	// SaveModels keeps every fold's trained model, for models that can be
	// saved (graph networks and every baseline), under
	// models/NAME/rR-fF/ of the run folder with the target scaling fitted
	// on its training fold. Default true.
	SaveModels *bool `toml:"save_models"`
	// Refit also trains every model that can be saved on all
	// participants after the cross-validation and keeps it under
	// models/NAME/all/, for predicting new participants. Default false.
	Refit bool `toml:"refit"`
}

// SetDefaults fills every unset field with its documented default.
func (o *Output) SetDefaults() {
	if o.SaveModels == nil {
		t := true
		o.SaveModels = &t
	}
}

// ReadExperiment reads and checks the experiment file at path. Unknown keys
// and values of the wrong type are errors naming the key and its line.
func ReadExperiment(path string) (*Experiment, error) {
	raw, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	exp, err := ParseExperiment(raw)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	exp.Dir = filepath.Dir(path)
	return exp, nil
}

// ParseExperiment decodes an experiment file's text, fills defaults and
// validates it. A word-valued key (such as permutation.blocks) set to a
// word it does not know is an error naming the key and its line and
// listing the words.
func ParseExperiment(raw []byte) (*Experiment, error) {
	exp, err := decodeExperiment(raw)
	if err != nil {
		return nil, err
	}
	if err := exp.Validate(); err != nil {
		return nil, err
	}
	return exp, nil
}

// decodeExperiment decodes an experiment file's text and fills defaults,
// without validating the settings.
func decodeExperiment(raw []byte) (*Experiment, error) {
	var exp Experiment
	if err := checkWords(raw, reflect.TypeFor[Experiment]()); err != nil {
		return nil, err
	}
	dec := toml.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&exp); err != nil {
		return nil, describeTOMLError(err)
	}
	exp.SetDefaults()
	return &exp, nil
}

// ReadCohortFile reads the experiment file at path for the participants
// to predict with a saved model (Predict): unknown keys and values of the
// wrong type are errors naming the key and its line, as in
// ReadExperiment, but only its [cohort] table is checked, and that
// without the keys training needs: targets and min_participants are not
// required (data.CheckUnscored). The file of a training experiment
// serves, and so does one holding only [cohort].
func ReadCohortFile(path string) (*Experiment, error) {
	raw, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	exp, err := decodeExperiment(raw)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	exp.Dir = filepath.Dir(path)
	return exp, nil
}

// SetDefaults fills every unset field with its documented default.
func (e *Experiment) SetDefaults() {
	e.Cohort.SetDefaults()
	e.Preprocess.SetDefaults()
	e.CV.SetDefaults()
	e.Permutation.SetDefaults()
	e.Output.SetDefaults()
	e.Drift.SetDefaults()
	e.SampleSize.SetDefaults()
	for i := range e.Models {
		e.Models[i].SetDefaults()
	}
}

// Validate reports the first setting that cannot work, naming its key.
func (e *Experiment) Validate() error {
	if e.Name != "" && (strings.ContainsAny(e.Name, `/\`+"\x00") || strings.HasPrefix(e.Name, ".") || strings.TrimSpace(e.Name) != e.Name) {
		return fmt.Errorf("name: %q cannot name a run folder: use letters, digits, - and _ (no path separator, no leading dot or space)", e.Name)
	}
	if err := e.Cohort.Validate(); err != nil {
		return err
	}
	if err := e.Preprocess.Validate(); err != nil {
		return err
	}
	if err := e.CV.Validate(); err != nil {
		return err
	}
	if err := e.Permutation.Validate(e.Models); err != nil {
		return err
	}
	if err := e.Drift.Validate(e.Models); err != nil {
		return err
	}
	if err := e.SampleSize.Validate(e.Models); err != nil {
		return err
	}
	if err := validateSweeps(e.Sweeps, e.Models); err != nil {
		return err
	}
	seen := make(map[string]bool)
	for i, m := range e.Models {
		if m.Name == "" {
			return fmt.Errorf("model[%d]: key \"name\" is required", i)
		}
		if seen[m.Name] {
			return fmt.Errorf("model[%d]: name %q is used twice", i, m.Name)
		}
		seen[m.Name] = true
		if err := m.Validate(); err != nil {
			return fmt.Errorf("model %q: %w", m.Name, err)
		}
	}
	return e.Comparison.Validate(e.Models, e.Sweeps)
}

// Comparison says how the models of an experiment are compared: the
// [comparison] table of an experiment file.
type Comparison struct {
	// Reference names the baseline every model is compared with: a
	// [[model]] that is not a network (a variant of a swept model is named
	// as the run names it, such as "ridge[alphas=10]"). "" (the default)
	// leaves the choice to the run, which makes it on the inner validation
	// parts of the training folds, never on the test folds: a run without
	// a reference records each baseline's inner validation error when it
	// has at least two baselines (see train.Result.InnerLoss).
	Reference string `toml:"reference"`
}

// Validate reports a reference that names no model of models, a model
// whose kind is not a baseline (model.Kind.Baseline), or a swept model
// (which the run replaces by its variants); the error names the key
// comparison.reference.
func (c Comparison) Validate(models []train.ModelConfig, sweeps []Sweep) error {
	const key = "comparison.reference"
	if c.Reference == "" {
		return nil
	}
	swept := func(name string) bool {
		return slices.ContainsFunc(sweeps, func(s Sweep) bool { return s.Model == name })
	}
	var ref *train.ModelConfig
	if i := slices.IndexFunc(models, func(m train.ModelConfig) bool { return m.Name == c.Reference }); i >= 0 {
		if swept(c.Reference) {
			return fmt.Errorf("%s: model %q is swept into variants; name one of them, such as %q", key, c.Reference, sweepGrid(c.Reference, sweeps)[0].Name)
		}
		ref = &models[i]
	}
	for i, m := range models { // a variant of a swept model, before Expand
		if swept(m.Name) && slices.ContainsFunc(sweepGrid(m.Name, sweeps), func(v Variant) bool { return v.Name == c.Reference }) {
			ref = &models[i]
		}
	}
	if ref == nil {
		return fmt.Errorf("%s: no model is named %q", key, c.Reference)
	}
	k, err := ref.Spec()
	if err != nil {
		return fmt.Errorf("%s: model %q: %w", key, ref.Name, err)
	}
	if !k.Baseline {
		var baselines []string
		for _, k := range model.Kinds() {
			if k.Baseline {
				baselines = append(baselines, k.Name)
			}
		}
		return fmt.Errorf("%s: model %q is a %s, not a baseline; the reference must be a baseline (%s)", key, c.Reference, k.Name, strings.Join(baselines, ", "))
	}
	return nil
}

// describeTOMLError rewrites go-toml's errors to name the key and its line.
func describeTOMLError(err error) error {
	var strict *toml.StrictMissingError
	if errors.As(err, &strict) {
		msgs := make([]string, len(strict.Errors))
		for i, e := range strict.Errors {
			row, _ := e.Position()
			msgs[i] = fmt.Sprintf("line %d: unknown key %q", row, strings.Join(e.Key(), "."))
		}
		return errors.New(strings.Join(msgs, "; "))
	}
	var de *toml.DecodeError
	if errors.As(err, &de) {
		row, col := de.Position()
		key := strings.Join(de.Key(), ".")
		if key != "" {
			return fmt.Errorf("line %d, column %d: key %q: %s", row, col, key, strings.TrimPrefix(de.Error(), "toml: "))
		}
		return fmt.Errorf("line %d, column %d: %s", row, col, strings.TrimPrefix(de.Error(), "toml: "))
	}
	return err
}

// Design returns what a train.Runner needs of e: its seed, cross-validation
// scheme and models, whether fold models are kept, and whether baselines
// record the inner-validation error that the reference baseline is chosen
// on (when no comparison.reference is named and there are two baselines
// or more).
func (e *Experiment) Design() *train.Design {
	baselines := 0
	for _, m := range e.Models {
		if k, err := m.Spec(); err == nil && k.Baseline {
			baselines++
		}
	}
	return &train.Design{
		Seed: e.Seed, CV: e.CV, Models: e.Models, SaveModels: *e.Output.SaveModels,
		InnerLoss:  e.Comparison.Reference == "" && baselines >= 2,
		Preprocess: e.Preprocess,
	}
}
