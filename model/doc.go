// Package model defines what every model kind of skein is: a Regressor,
// fitted on the training part of a cross-validation fold and asked to predict
// its test part. The graph-filter networks live in model/graphnet and the
// baselines in model/linear; the runner in package train treats them all
// alike. model imports only data; it must not import train, eval or
// experiment.
//
// # Kinds
//
// A kind is what the kind table of a model entry of an experiment file
// names: [model.network], [model.mean], [model.ridge],
// [model.kernel_ridge] or [model.cpm] for scores, and [model.majority],
// [model.logistic] or [model.kernel_logistic] for class labels (the
// network learns both). A kind for labels builds a Classifier
// (NewClassifier, read back by LoadClassifier) instead of a Regressor. Each kind's package declares it
// once, as a Kind registered with Register from its init function (in the
// manner of database/sql drivers and image formats): its name (the table's
// key), how to build a Regressor from its Settings (New) and how to read a
// saved one back (Load), whether it is a baseline, whether it fits score
// columns independently (ColumnWise), how its regressors and its
// classifiers define edge importance (Importance, ClassImportance: an
// Interpreter's maps of each score; a ClassInterpreter's of each decision
// value, the log-odds of the positive class of a binary label or the
// centred logit of each class of more) and over which input views
// (ImportanceViews: the maps of different matrices or branches are never
// summed). The rest of skein asks the registry (Lookup, Kinds) instead
// of naming kinds: the runner builds models and reads saved ones through
// it, the permutation test and the batch plan read ColumnWise, the
// comparison reads Baseline and the report reads Importance and Describe.
// The registry is the package's one global state.
//
// Adding a kind takes three things:
//
//  1. its package: a Regressor (with the optional interfaces it meets:
//     ColumnWise, Iterative, Interpreter, Saver, Tuned) and a settings type
//     that decodes the kind's table and implements Settings;
//  2. its registration: model.Register(model.Kind{Name: ..., New: ...})
//     in an init function of that package, declaring the properties its
//     regressors have, and a case in kindSettings of registry_test.go: the
//     test builds, fits and saves every registered kind and checks that its
//     regressors implement what the kind declares;
//  3. one field for its table in train.ModelConfig: a pointer to the
//     settings type whose toml key is the kind's name, such as
//     Network *graphnet.Config `toml:"network,omitempty"`. The field's
//     type imports the package, which registers the kind.
package model
