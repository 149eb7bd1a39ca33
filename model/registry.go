package model

import (
	"errors"
	"fmt"
	"slices"
	"strings"
	"sync"
)

// A Kind is one kind of model as an experiment file names it, declared by
// the package that implements it: how to build and load its regressors,
// and what the rest of skein needs to know about them without building
// one. Kinds are registered with Register and found with Lookup.
type Kind struct {
	// Name is the key of the kind's table in a [[model]] entry of an
	// experiment file: kind "ridge" is configured by [model.ridge]. It is
	// made of lower-case letters, digits and underscores.
	Name string
	// Baseline reports whether the kind is a baseline that the other
	// models are judged against; only a baseline may be the reference of
	// a comparison.
	Baseline bool
	// ColumnWise reports whether every regressor New returns is a
	// ColumnWise: it fits each score column independently of the others,
	// so that the permutation test stacks permuted scores as extra
	// columns instead of refitting once per permutation.
	ColumnWise bool
	// Importance says how the kind's regressors define edge importance
	// (Interpreter); the zero Importance when they do not.
	Importance Importance
	// ClassImportance says how the kind's classifiers define edge
	// importance (ClassInterpreter); the zero Importance when they do
	// not.
	ClassImportance Importance
	// New builds an untrained regressor for p regions and the given number
	// of score columns from the kind's settings, which SetDefaults has
	// filled and Validate accepted; seed drives everything random in it.
	// The settings are the kind's table as decoded from the experiment
	// file; New returns an error when they are of another kind.
	// New is nil for a kind that only classifies (NewClassifier).
	New func(s Settings, p, targets int, seed int64) (Regressor, error)
	// NewClassifier builds an untrained Classifier for p regions and a
	// label of classes ≥ 2 classes from the kind's settings, as New does
	// for scores; nil for a kind that does not classify. A kind sets New,
	// NewClassifier or both: an experiment fits each model to the targets
	// its kind can learn (scores with New, labels with NewClassifier).
	NewClassifier func(s Settings, p, classes int, seed int64) (Classifier, error)
	// LoadClassifier reads a Classifier saved by its Save from the folder
	// dir; nil when the kind's classifiers are not saved.
	LoadClassifier func(dir string) (Classifier, error)
	// Load reads a regressor saved by its Save (Saver) from the folder
	// dir; nil when the kind's regressors are not saved. When Load is set,
	// every regressor New returns is a Saver.
	Load func(dir string) (Regressor, error)
	// ImportanceViews, when not nil, names the input views whose edge
	// importance the kind's Interpreters with settings s report in maps of
	// their own, such as "functional" and "structural" for a baseline on
	// both matrices, or one per branch of a network: EdgeImportance (and
	// EdgeImportanceFrom) then returns V·T maps for V views and T targets,
	// view after view (the map of view v and target t at index v·T + t).
	// nil means one map per target. The kind's ClassInterpreters report
	// the same views, with ExplainedClasses(K) maps per view in place of
	// the T targets' maps.
	ImportanceViews func(s Settings) []string
	// EdgeScaling, when not nil, says which of the participants' matrices
	// the kind's regressors with settings s learn from standardized per
	// edge with the mean and SD of their fold's training participants
	// (train.EdgeScaler). The runner then fits that step on the fold,
	// gives the regressor the standardized participants to Fit, Predict
	// and EdgeImportance (as a ReferenceInterpreter, measured from the
	// standardized zero matrix, so importance stays in raw input units)
	// and saves the step with the fold model. Other kinds, and kinds
	// returning false for both, see the matrices as preprocessing leaves
	// them.
	EdgeScaling func(s Settings) (functional, structural bool)
	// Inputs, when not nil, says which of a participant's connectomes the
	// kind's regressors with settings s learn from: the functional
	// matrix, the structural matrix (directly, or through a graph
	// operator built from it), or both. A model that learns from both
	// fuses structure with function, the question a report answers
	// first. Nil means neither, as for the mean predictor.
	Inputs func(s Settings) (functional, structural bool)
	// MinTrain, when not nil, returns the fewest participants (groups,
	// when the cohort has a group column) a training set must hold for
	// the kind's Fit with settings s, and the key that sets it, such as
	// 5 and "model.ridge.inner_folds"; nil, or n ≤ 0, asks for nothing
	// beyond the two participants every fit needs. A run checks it
	// against every training fold before it trains anything.
	MinTrain func(s Settings) (n int, key string)
	// Describe, when not nil, summarizes the settings in a few words for a
	// report's table of models, such as "2 branches, up to 100 epochs".
	Describe func(s Settings) string
}

// Views returns the names of the importance views of the kind's
// regressors with settings s (ImportanceViews), or nil for one map per
// target.
func (k Kind) Views(s Settings) []string {
	if k.ImportanceViews == nil {
		return nil
	}
	return k.ImportanceViews(s)
}

// Importance describes how a kind's regressors compute EdgeImportance.
type Importance struct {
	// Method names the method in a few words, such as "gradient × input";
	// empty when the kind has no edge importance.
	Method string
	// Description is a sentence for a figure caption saying what the
	// importance of an edge is.
	Description string
}

// Settings is a kind's table of an experiment file, decoded: the value
// that Kind.New receives.
type Settings interface {
	// SetDefaults fills every unset setting with its documented default.
	SetDefaults()
	// Validate reports the first setting that cannot work, naming its key
	// in the experiment file (for example "model.ridge.alphas").
	Validate() error
}

// Inapplicable is implemented by Settings some of whose keys can be set
// (or filled by SetDefaults) without doing anything for the others: a
// schedule's period under another schedule, a layer's size on a layer
// that has channels. InapplicableKeys returns them as paths from the
// kind's table, dotted, with 1-based indices in brackets for arrays of
// tables, such as "optimizer.momentum" or "branch[2].layers[1].size". A
// report leaves them out of the experiment it shows.
type Inapplicable interface {
	InapplicableKeys() []string
}

// ErrUnknownKind is wrapped by the error of Lookup for a name that no kind
// is registered under.
var ErrUnknownKind = errors.New("unknown model kind")

// The registry of kinds is the one package-level state of model, filled
// by the kinds' packages when they are initialized.
var (
	registryMu sync.RWMutex
	registry   = make(map[string]Kind)
)

// Register makes a kind available under k.Name. It is meant to be called
// from the init function of the package that implements the kind. It
// panics if k.Name is empty or not made of lower-case letters, digits and
// underscores, if both k.New and k.NewClassifier are nil, or if a kind of
// that name is already registered.
func Register(k Kind) {
	if k.Name == "" || strings.TrimFunc(k.Name, func(r rune) bool {
		return r >= 'a' && r <= 'z' || r >= '0' && r <= '9' || r == '_'
	}) != "" {
		panic(fmt.Sprintf("model: Register: invalid kind name %q", k.Name))
	}
	if k.New == nil && k.NewClassifier == nil {
		panic("model: Register: kind " + k.Name + " has neither New nor NewClassifier")
	}
	registryMu.Lock()
	defer registryMu.Unlock()
	if _, dup := registry[k.Name]; dup {
		panic("model: Register called twice for kind " + k.Name)
	}
	registry[k.Name] = k
}

// Lookup returns the kind registered under name. For an unknown name the
// error wraps ErrUnknownKind and names it and the known kinds.
func Lookup(name string) (Kind, error) {
	registryMu.RLock()
	k, ok := registry[name]
	registryMu.RUnlock()
	if !ok {
		var names []string
		for _, k := range Kinds() {
			names = append(names, k.Name)
		}
		return Kind{}, fmt.Errorf("%w %q (known kinds: %s)", ErrUnknownKind, name, strings.Join(names, ", "))
	}
	return k, nil
}

// Kinds returns every registered kind, sorted by name.
func Kinds() []Kind {
	registryMu.RLock()
	defer registryMu.RUnlock()
	kinds := make([]Kind, 0, len(registry))
	for _, k := range registry {
		kinds = append(kinds, k)
	}
	slices.SortFunc(kinds, func(a, b Kind) int { return strings.Compare(a.Name, b.Name) })
	return kinds
}
