package linear

import (
	"fmt"

	"github.com/skein-neuro/skein/model"
)

// The names of the baselines' kinds: the keys of their tables in an
// experiment file.
const (
	kindMean        = "mean"
	kindRidge       = "ridge"
	kindKernelRidge = "kernel_ridge"
	kindCPM         = "cpm"

	kindMajority       = "majority"
	kindLogistic       = "logistic"
	kindKernelLogistic = "kernel_logistic"
)

// patternImportance is the edge importance of ridge and kernel ridge.
var patternImportance = model.Importance{
	Method:      "activation pattern",
	Description: "Activation pattern cov(edge, prediction) over the test participants (Haufe et al. 2014)",
}

// patternClassImportance is the edge importance of logistic and kernel
// logistic regression.
var patternClassImportance = model.Importance{
	Method:      "activation pattern",
	Description: "Activation pattern cov(edge, decision value) over the test participants (Haufe et al. 2014)",
}

// classifierViews is the ImportanceViews of logistic and kernel logistic
// regression: their input's matrix, or both.
func classifierViews(s model.Settings) []string {
	switch c := s.(type) {
	case *LogisticConfig:
		return importanceViews(c.Input)
	case *KernelLogisticConfig:
		return importanceViews(c.Input)
	}
	return nil
}

// The baselines register themselves as kinds of model: all are baselines,
// those for scores fit score columns independently, and all can be saved.
// majority, logistic and kernel_logistic learn class labels only
// (NewClassifier; New is nil).
func init() {
	model.Register(model.Kind{
		Name: kindMean, Baseline: true, ColumnWise: true,
		New: func(s model.Settings, _, targets int, seed int64) (model.Regressor, error) {
			c, ok := s.(*MeanConfig)
			if !ok {
				return nil, settingsError(kindMean, s, c)
			}
			return Config{Mean: c}.New(targets, seed)
		},
		Load: loader(kindMean),
	})
	model.Register(model.Kind{
		Name: kindRidge, Baseline: true, ColumnWise: true, Importance: patternImportance,
		New: func(s model.Settings, _, targets int, seed int64) (model.Regressor, error) {
			c, ok := s.(*RidgeConfig)
			if !ok {
				return nil, settingsError(kindRidge, s, c)
			}
			return Config{Ridge: c}.New(targets, seed)
		},
		Load:   loader(kindRidge),
		Inputs: inputs,
		ImportanceViews: func(s model.Settings) []string {
			if c, ok := s.(*RidgeConfig); ok {
				return importanceViews(c.Input)
			}
			return nil
		},
		MinTrain: func(s model.Settings) (int, string) {
			c, ok := s.(*RidgeConfig)
			if !ok || len(c.Alphas) < 2 || c.InnerFolds == nil {
				return 0, "" // one penalty: no inner folds
			}
			return *c.InnerFolds, "model.ridge.inner_folds"
		},
	})
	model.Register(model.Kind{
		Name: kindKernelRidge, Baseline: true, ColumnWise: true, Importance: patternImportance,
		New: func(s model.Settings, _, targets int, seed int64) (model.Regressor, error) {
			c, ok := s.(*KernelRidgeConfig)
			if !ok {
				return nil, settingsError(kindKernelRidge, s, c)
			}
			return Config{KernelRidge: c}.New(targets, seed)
		},
		Inputs: inputs,
		Load:   loader(kindKernelRidge),
		ImportanceViews: func(s model.Settings) []string {
			if c, ok := s.(*KernelRidgeConfig); ok {
				return importanceViews(c.Input)
			}
			return nil
		},
		MinTrain: func(s model.Settings) (int, string) {
			c, ok := s.(*KernelRidgeConfig)
			if !ok || len(c.Alphas) < 2 || c.InnerFolds == nil {
				return 0, "" // one penalty: no inner folds
			}
			return *c.InnerFolds, "model.kernel_ridge.inner_folds"
		},
	})
	model.Register(model.Kind{
		Name: kindCPM, Baseline: true, ColumnWise: true,
		Importance: model.Importance{
			Method:      "selected edges",
			Description: "Selected edges, +1 in the positive and −1 in the negative network",
		},
		New: func(s model.Settings, _, targets int, seed int64) (model.Regressor, error) {
			c, ok := s.(*CPMConfig)
			if !ok {
				return nil, settingsError(kindCPM, s, c)
			}
			return Config{CPM: c}.New(targets, seed)
		},
		Inputs: inputs,
		Load:   loader(kindCPM),
		ImportanceViews: func(s model.Settings) []string {
			if c, ok := s.(*CPMConfig); ok {
				return importanceViews(c.Input)
			}
			return nil
		},
	})
	model.Register(model.Kind{
		Name: kindMajority, Baseline: true,
		NewClassifier: func(s model.Settings, _, classes int, seed int64) (model.Classifier, error) {
			c, ok := s.(*MajorityConfig)
			if !ok {
				return nil, settingsError(kindMajority, s, c)
			}
			return Config{Majority: c}.NewClassifier(classes, seed)
		},
		LoadClassifier: classifierLoader(kindMajority),
	})
	model.Register(model.Kind{
		Name: kindLogistic, Baseline: true, ClassImportance: patternClassImportance, ImportanceViews: classifierViews,
		NewClassifier: func(s model.Settings, _, classes int, seed int64) (model.Classifier, error) {
			c, ok := s.(*LogisticConfig)
			if !ok {
				return nil, settingsError(kindLogistic, s, c)
			}
			return Config{Logistic: c}.NewClassifier(classes, seed)
		},
		LoadClassifier: classifierLoader(kindLogistic),
		Inputs:         inputs,
		MinTrain: func(s model.Settings) (int, string) {
			c, ok := s.(*LogisticConfig)
			if !ok || len(c.Cs) < 2 || c.InnerFolds == nil {
				return 0, "" // one C: no inner folds
			}
			return *c.InnerFolds, "model.logistic.inner_folds"
		},
	})
	model.Register(model.Kind{
		Name: kindKernelLogistic, Baseline: true, ClassImportance: patternClassImportance, ImportanceViews: classifierViews,
		NewClassifier: func(s model.Settings, _, classes int, seed int64) (model.Classifier, error) {
			c, ok := s.(*KernelLogisticConfig)
			if !ok {
				return nil, settingsError(kindKernelLogistic, s, c)
			}
			return Config{KernelLogistic: c}.NewClassifier(classes, seed)
		},
		LoadClassifier: classifierLoader(kindKernelLogistic),
		Inputs:         inputs,
		MinTrain: func(s model.Settings) (int, string) {
			c, ok := s.(*KernelLogisticConfig)
			if !ok || len(c.Alphas) < 2 || c.InnerFolds == nil {
				return 0, "" // one penalty: no inner folds
			}
			return *c.InnerFolds, "model.kernel_logistic.inner_folds"
		},
	})
}

// inputs is the Inputs of the baselines with an input key: the
// connectomes their input names ("functional" when unset).
func inputs(s model.Settings) (functional, structural bool) {
	var in Input
	switch c := s.(type) {
	case *RidgeConfig:
		in = c.Input
	case *KernelRidgeConfig:
		in = c.Input
	case *CPMConfig:
		in = c.Input
	case *LogisticConfig:
		in = c.Input
	case *KernelLogisticConfig:
		in = c.Input
	}
	switch in {
	case InputStructural:
		return false, true
	case InputBoth:
		return true, true
	}
	return true, false
}

func settingsError(kind string, got model.Settings, want any) error {
	return fmt.Errorf("linear: kind %s takes settings of type %T, not %T", kind, want, got)
}

// loader returns the Load of a kind: Load, refusing a folder that holds a
// baseline of another kind.
func loader(kind string) func(dir string) (model.Regressor, error) {
	return func(dir string) (model.Regressor, error) { return load(dir, kind) }
}

// classifierLoader returns the LoadClassifier of a kind: LoadClassifier,
// refusing a folder that holds a baseline of another kind.
func classifierLoader(kind string) func(dir string) (model.Classifier, error) {
	return func(dir string) (model.Classifier, error) { return loadClassifier(dir, kind) }
}

// SetDefaults does nothing: the majority-class predictor has no settings.
func (*MajorityConfig) SetDefaults() {}

// Validate returns nil: the majority-class predictor has no settings.
func (MajorityConfig) Validate() error { return nil }

// SetDefaults fills every unset field with its documented default.
func (c *LogisticConfig) SetDefaults() { (&Config{Logistic: c}).SetDefaults() }

// Validate reports the first setting that cannot work, naming its key
// (for example "model.logistic.cs").
func (c LogisticConfig) Validate() error { return Config{Logistic: &c}.Validate() }

// InapplicableKeys returns inner_folds when the C grid holds one value
// (model.Inapplicable).
func (c LogisticConfig) InapplicableKeys() []string { return innerFoldsUnused(c.Cs) }

// SetDefaults fills every unset field with its documented default.
func (c *KernelLogisticConfig) SetDefaults() { (&Config{KernelLogistic: c}).SetDefaults() }

// Validate reports the first setting that cannot work, naming its key
// (for example "model.kernel_logistic.alphas").
func (c KernelLogisticConfig) Validate() error { return Config{KernelLogistic: &c}.Validate() }

// InapplicableKeys returns inner_folds when the alpha grid holds one value
// (model.Inapplicable).
func (c KernelLogisticConfig) InapplicableKeys() []string { return innerFoldsUnused(c.Alphas) }

// SetDefaults does nothing: the mean predictor has no settings.
func (*MeanConfig) SetDefaults() {}

// Validate returns nil: the mean predictor has no settings.
func (MeanConfig) Validate() error { return nil }

// InapplicableKeys returns inner_folds when the alpha grid holds one value,
// as no inner cross-validation is run then (model.Inapplicable).
func (c RidgeConfig) InapplicableKeys() []string { return innerFoldsUnused(c.Alphas) }

// InapplicableKeys returns inner_folds when the alpha grid holds one value
// (model.Inapplicable).
func (c KernelRidgeConfig) InapplicableKeys() []string { return innerFoldsUnused(c.Alphas) }

func innerFoldsUnused(alphas []float64) []string {
	if len(alphas) == 1 {
		return []string{"inner_folds"}
	}
	return nil
}

// SetDefaults fills every unset field with its documented default.
func (c *RidgeConfig) SetDefaults() { (&Config{Ridge: c}).SetDefaults() }

// Validate reports the first setting that cannot work, naming its key
// (for example "model.ridge.alphas").
func (c RidgeConfig) Validate() error { return Config{Ridge: &c}.Validate() }

// SetDefaults fills every unset field with its documented default.
func (c *KernelRidgeConfig) SetDefaults() { (&Config{KernelRidge: c}).SetDefaults() }

// Validate reports the first setting that cannot work, naming its key
// (for example "model.kernel_ridge.kernel").
func (c KernelRidgeConfig) Validate() error { return Config{KernelRidge: &c}.Validate() }

// SetDefaults fills every unset field with its documented default.
func (c *CPMConfig) SetDefaults() { (&Config{CPM: c}).SetDefaults() }

// Validate reports the first setting that cannot work, naming its key
// (for example "model.cpm.p_threshold").
func (c CPMConfig) Validate() error { return Config{CPM: &c}.Validate() }
