package experiment

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"slices"
	"strings"
	"unicode"

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
	// on its training fold, and the classifiers of class labels in its
	// labels/LABEL/ folders (train.Fitted). Default true.
	SaveModels *bool `toml:"save_models"`
	// Refit also trains every model that can be saved on all
	// participants after the cross-validation, for the scores and the
	// labels it learns, and keeps it under models/NAME/all/, for
	// predicting new participants. Default false.
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
// and values of the wrong type are errors naming the key and its line;
// settings that cannot work are all reported at once (Validate), each
// prefixed with path.
func ReadExperiment(path string) (*Experiment, error) {
	exp, err := readExperiment(path)
	if err != nil {
		return nil, err
	}
	return exp, nil
}

// readExperiment is ReadExperiment, but when the file decodes and only
// Validate refuses it, it returns the experiment (defaults filled) with
// the error, so that CheckFile can check the cohort as well.
func readExperiment(path string) (*Experiment, error) {
	raw, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	exp, err := parseExperiment(raw)
	if exp != nil {
		exp.Dir = filepath.Dir(path)
	}
	return exp, prefixEach(path, err)
}

// ParseExperiment decodes an experiment file's text, fills defaults and
// validates it. A word-valued key (such as permutation.blocks) set to a
// word it does not know is an error naming the key and its line and
// listing the words.
func ParseExperiment(raw []byte) (*Experiment, error) {
	exp, err := parseExperiment(raw)
	if err != nil {
		return nil, err
	}
	return exp, nil
}

// parseExperiment is ParseExperiment, but returns the decoded experiment
// with Validate's error.
func parseExperiment(raw []byte) (*Experiment, error) {
	exp, err := decodeExperiment(raw)
	if err != nil {
		return nil, err
	}
	return exp, exp.Validate()
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

// Validate reports every setting that cannot work, each naming its key,
// joined (errors.Join); nil when there is none. Each table is checked
// on its own, so one mistake does not hide another. Model names must be
// set, distinct, not "." or "..", free of '/', '\\' and control
// characters, and give distinct folder names (train.FolderName, compared
// without case, as some file systems do).
func (e *Experiment) Validate() error {
	var nameErr error
	if e.Name != "" && (strings.ContainsAny(e.Name, `/\`+"\x00") || strings.HasPrefix(e.Name, ".") || strings.TrimSpace(e.Name) != e.Name) {
		nameErr = fmt.Errorf("name: %q cannot name a run folder: use letters, digits, - and _ (no path separator, no leading dot or space)", e.Name)
	}
	errs := []error{
		nameErr,
		e.Cohort.Validate(),
		e.Preprocess.Validate(),
		e.CV.Validate(),
		e.Permutation.Validate(e.Models),
		e.Drift.Validate(e.Models),
		e.SampleSize.Validate(e.Models),
		validateSweeps(e.Sweeps, e.Models),
	}
	for i, m := range e.Models {
		if m.Name == "" {
			errs = append(errs, fmt.Errorf("model[%d]: key \"name\" is required", i))
			continue
		}
		if err := m.Validate(); err != nil {
			errs = append(errs, fmt.Errorf("model %q: %w", m.Name, err))
		}
	}
	errs = append(errs, checkModelNames(e.Models))
	errs = append(errs, e.Comparison.Validate(e.Models, e.Sweeps))
	return errors.Join(errs...)
}

// checkModelNames reports names of models that cannot name their folders
// in a run folder: "." and "..", names with '/', '\\' or a control
// character, and names used twice or whose folder names
// (train.FolderName) are equal but for case.
func checkModelNames(models []train.ModelConfig) error {
	var errs []error
	folders := make(map[string]string)
	for i, m := range models {
		if m.Name == "" {
			continue
		}
		switch {
		case m.Name == "." || m.Name == "..":
			errs = append(errs, fmt.Errorf("model[%d]: name %q cannot name a folder; choose a word such as \"ridge-fc\"", i, m.Name))
			continue
		case strings.ContainsAny(m.Name, `/\`) || strings.ContainsFunc(m.Name, unicode.IsControl):
			errs = append(errs, fmt.Errorf("model[%d]: name %q holds a path separator or control character; models are folders of the run folder, so a name must be one plain word", i, m.Name))
			continue
		}
		folder := strings.ToLower(train.FolderName(m.Name))
		switch other, ok := folders[folder]; {
		case ok && other == m.Name:
			errs = append(errs, fmt.Errorf("model[%d]: name %q is used twice", i, m.Name))
		case ok:
			errs = append(errs, fmt.Errorf("model[%d]: name %q and model %q would share the folder %q in the run folder; rename one", i, m.Name, other, train.FolderName(m.Name)))
		default:
			folders[folder] = m.Name
		}
	}
	return errors.Join(errs...)
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

// describeTOMLError rewrites go-toml's errors to name the key and its
// line, and to say in words what the key wants and what the file has
// instead of naming Go types.
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
		msg := strings.TrimPrefix(de.Error(), "toml: ")
		if de.Key() != nil {
			msg = describeMismatch(msg, fieldType(reflect.TypeFor[Experiment](), de.Key()))
			return fmt.Errorf("line %d, column %d: key %q: %s", row, col, strings.Join(de.Key(), "."), msg)
		}
		return fmt.Errorf("line %d, column %d: %s", row, col, msg)
	}
	return err
}

// tomlMismatch matches go-toml's messages for a value of the wrong type:
// "cannot decode TOML string into struct field train.CV.Folds of type
// int", "cannot decode TOML integer into float64", "cannot store a table
// in a int".
var tomlMismatch = regexp.MustCompile(`^cannot (?:decode TOML (.+?) into .*|store (?:a|an) (table|array table) in an? .*)$`)

// describeMismatch turns go-toml's message msg about a value that does not
// fit the key's Go type t (nil when unknown) into "want a whole number,
// found text"; other messages are returned as they are.
func describeMismatch(msg string, t reflect.Type) string {
	m := tomlMismatch.FindStringSubmatch(msg)
	if m == nil || t == nil {
		return msg
	}
	found := m[1] + m[2]
	switch found {
	case "string":
		found = "text"
	case "integer":
		found = "a whole number"
	case "float":
		found = "a number with a fraction or exponent"
	case "boolean", "bool":
		found = "true or false"
	case "array":
		found = "a list"
	case "table", "inline table":
		found = "a table"
	case "array table":
		found = "a list of tables ([[...]])"
	default:
		found = "a " + found
	}
	return fmt.Sprintf("want %s, found %s", wantWords(t), found)
}

// wantWords says in words what a key of Go type t holds.
func wantWords(t reflect.Type) string {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	switch t.Kind() {
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64,
		reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		return "a whole number"
	case reflect.Float32, reflect.Float64:
		return "a number"
	case reflect.String:
		return "text in quotes"
	case reflect.Bool:
		return "true or false"
	case reflect.Slice, reflect.Array:
		return "a list of " + strings.TrimPrefix(wantWords(t.Elem()), "a ")
	default:
		return "a table"
	}
}

// Design returns what a train.Runner needs of e: its seed, cross-validation
// scheme and models, whether fold models are kept, and whether baselines
// record the inner-validation error that the scores' reference baseline
// is chosen on (when comparison.reference names no baseline that learns
// scores and two baselines or more do), and the inner-validation log loss that a class label's
// reference is chosen on (when comparison.reference names no baseline
// that classifies and two baselines or more classify).
func (e *Experiment) Design() *train.Design {
	regressors, classifiers := 0, 0
	namedRegresses, namedClassifies := false, false
	for _, m := range e.Models {
		if k, err := m.Spec(); err == nil && k.Baseline {
			named := m.Name == e.Comparison.Reference
			if k.New != nil {
				regressors++
				namedRegresses = namedRegresses || named
			}
			if k.NewClassifier != nil {
				classifiers++
				namedClassifies = namedClassifies || named
			}
		}
	}
	return &train.Design{
		Seed: e.Seed, CV: e.CV, Models: e.Models, SaveModels: *e.Output.SaveModels,
		InnerLoss:  !namedRegresses && regressors >= 2,
		LabelLoss:  !namedClassifies && classifiers >= 2,
		Preprocess: e.Preprocess,
	}
}
