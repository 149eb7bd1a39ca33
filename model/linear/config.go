package linear

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/skein-neuro/skein/internal/enum"
	"github.com/skein-neuro/skein/model"
)

// Config chooses one baseline and its settings: the sub-tables of a
// [[model]] entry of an experiment file, [model.mean], [model.ridge],
// [model.kernel_ridge] or [model.cpm] for scores, [model.majority],
// [model.logistic] or [model.kernel_logistic] for class labels. Exactly
// one field is set; a Config with none set chooses no baseline (Kind
// returns ""). In the settings, "" and nil take the default; Go code sets
// a number as InnerFolds: new(10).
type Config struct {
	Mean           *MeanConfig           `toml:"mean,omitempty"`
	Ridge          *RidgeConfig          `toml:"ridge,omitempty"`
	KernelRidge    *KernelRidgeConfig    `toml:"kernel_ridge,omitempty"`
	CPM            *CPMConfig            `toml:"cpm,omitempty"`
	Majority       *MajorityConfig       `toml:"majority,omitempty"`
	Logistic       *LogisticConfig       `toml:"logistic,omitempty"`
	KernelLogistic *KernelLogisticConfig `toml:"kernel_logistic,omitempty"`
}

// Input is the value of the input key of a baseline: which connectome's
// edges it reads. One of InputFunctional, InputStructural or InputBoth; ""
// is unset (SetDefaults makes it InputFunctional).
type Input string

// Values of the input key.
const (
	InputFunctional Input = "functional" // upper triangle of Participant.Functional
	InputStructural Input = "structural" // upper triangle of Participant.Structural
	InputBoth       Input = "both"       // functional edges, then structural edges
)

// AlphaScale is the value of the alpha_scale key: AlphaRelative or
// AlphaAbsolute; "" is unset (SetDefaults makes it AlphaRelative).
type AlphaScale string

// Values of the alpha_scale key.
const (
	// AlphaRelative multiplies each alpha by the mean eigenvalue of the
	// training fold's kernel, trace(K)/n, which for z-scored edges is the
	// number of non-constant edges: the same grid then suits any cohort size.
	AlphaRelative AlphaScale = "relative"
	// AlphaAbsolute uses each alpha as the penalty itself, as
	// scikit-learn's Ridge and KernelRidge do.
	AlphaAbsolute AlphaScale = "absolute"
)

// Standardization is the value of the standardize key of [model.ridge]:
// StandardizeZScore or StandardizeCenter; "" is unset (SetDefaults makes it
// StandardizeZScore).
type Standardization string

// Values of the standardize key of [model.ridge].
const (
	StandardizeZScore Standardization = "zscore" // subtract the training mean, divide by the training SD
	StandardizeCenter Standardization = "center" // subtract the training mean only
)

// InnerCV is the value of the inner key of [model.ridge]: how the penalty
// is chosen from the alphas grid, InnerKFold or InnerLOO; "" is unset
// (SetDefaults makes it InnerKFold).
type InnerCV string

// Values of the inner key of [model.ridge].
const (
	// InnerKFold chooses by inner k-fold cross-validation (inner_folds
	// folds, families kept whole), each inner fold standardizing the edges
	// with its own fitting rows: the lowest mean over folds of the fold's
	// mean squared error. It costs one kernel and one factorization per
	// inner fold.
	InnerKFold InnerCV = "kfold"
	// InnerLOO chooses by efficient leave-one-out cross-validation: the
	// lowest mean squared leave-one-out error, computed exactly for every
	// penalty from the one factorization of the training fold that the
	// final fit uses, so it costs about one fit. The edges are standardized
	// once with the whole training fold (a left-out participant's edges
	// count in the mean and SD it is scaled by), as scikit-learn's RidgeCV
	// after a StandardScaler does, and families are not kept whole. Every
	// alpha must be positive.
	InnerLOO InnerCV = "loo"
)

// Kernel is the value of the kernel key of [model.kernel_ridge]:
// KernelLinear or KernelCorrelation; "" is unset (SetDefaults makes it
// KernelCorrelation).
type Kernel string

// Values of the kernel key of [model.kernel_ridge].
const (
	KernelLinear      Kernel = "linear"      // K(a, b) = a·b
	KernelCorrelation Kernel = "correlation" // K(a, b) = Pearson r of a and b
)

// Correlation is the value of the correlation key of [model.cpm]:
// CorrelationPearson or CorrelationSpearman; "" is unset (SetDefaults makes
// it CorrelationPearson).
type Correlation string

// Values of the correlation key of [model.cpm].
const (
	CorrelationPearson  Correlation = "pearson"
	CorrelationSpearman Correlation = "spearman"
)

// CPMNetwork is the value of the network key of [model.cpm]: which
// network strengths predict the score. One of NetworkPositive,
// NetworkNegative or NetworkBoth; "" is unset (SetDefaults makes it
// NetworkBoth).
type CPMNetwork string

// Values of the network key of [model.cpm].
const (
	NetworkPositive CPMNetwork = "positive" // y ~ positive strength
	NetworkNegative CPMNetwork = "negative" // y ~ negative strength
	NetworkBoth     CPMNetwork = "both"     // y ~ positive strength + negative strength
)

// ClassWeight is the value of the class_weight key of [model.logistic]
// and [model.kernel_logistic]: how much each training participant counts
// in the fit. ClassWeightNone or ClassWeightBalanced; "" is unset
// (SetDefaults makes it ClassWeightNone).
type ClassWeight string

// Values of the class_weight key.
const (
	ClassWeightNone ClassWeight = "none" // every participant weighs 1
	// ClassWeightBalanced weighs a participant of class k by
	// w_k = n/(K·n_k), n_k of the n training participants being of class k
	// and K the number of classes (scikit-learn's class_weight="balanced"):
	// every class then weighs n/K in all.
	ClassWeightBalanced ClassWeight = "balanced"
)

// UnmarshalText sets w to the word text: "none", "balanced" or ""
// (unset). Another word is an error listing these.
func (w *ClassWeight) UnmarshalText(text []byte) error {
	return enum.Parse(w, text, ClassWeightNone, ClassWeightBalanced)
}

// MarshalText returns the word of w.
func (w ClassWeight) MarshalText() ([]byte, error) { return []byte(w), nil }

// String returns the word of w.
func (w ClassWeight) String() string { return string(w) }

// UnmarshalText sets in to the word text: "functional", "structural",
// "both" or "" (unset). Another word is an error listing these.
func (in *Input) UnmarshalText(text []byte) error {
	return enum.Parse(in, text, InputFunctional, InputStructural, InputBoth)
}

// MarshalText returns the word of in.
func (in Input) MarshalText() ([]byte, error) { return []byte(in), nil }

// String returns the word of in.
func (in Input) String() string { return string(in) }

// UnmarshalText sets a to the word text: "relative", "absolute" or ""
// (unset). Another word is an error listing these.
func (a *AlphaScale) UnmarshalText(text []byte) error {
	return enum.Parse(a, text, AlphaRelative, AlphaAbsolute)
}

// MarshalText returns the word of a.
func (a AlphaScale) MarshalText() ([]byte, error) { return []byte(a), nil }

// String returns the word of a.
func (a AlphaScale) String() string { return string(a) }

// UnmarshalText sets s to the word text: "zscore", "center" or ""
// (unset). Another word is an error listing these.
func (s *Standardization) UnmarshalText(text []byte) error {
	return enum.Parse(s, text, StandardizeZScore, StandardizeCenter)
}

// MarshalText returns the word of s.
func (s Standardization) MarshalText() ([]byte, error) { return []byte(s), nil }

// String returns the word of s.
func (s Standardization) String() string { return string(s) }

// UnmarshalText sets v to the word text: "kfold", "loo" or "" (unset).
// Another word is an error listing these.
func (v *InnerCV) UnmarshalText(text []byte) error {
	return enum.Parse(v, text, InnerKFold, InnerLOO)
}

// MarshalText returns the word of v.
func (v InnerCV) MarshalText() ([]byte, error) { return []byte(v), nil }

// String returns the word of v.
func (v InnerCV) String() string { return string(v) }

// UnmarshalText sets k to the word text: "correlation", "linear" or ""
// (unset). Another word is an error listing these.
func (k *Kernel) UnmarshalText(text []byte) error {
	return enum.Parse(k, text, KernelCorrelation, KernelLinear)
}

// MarshalText returns the word of k.
func (k Kernel) MarshalText() ([]byte, error) { return []byte(k), nil }

// String returns the word of k.
func (k Kernel) String() string { return string(k) }

// UnmarshalText sets c to the word text: "pearson", "spearman" or ""
// (unset). Another word is an error listing these.
func (c *Correlation) UnmarshalText(text []byte) error {
	return enum.Parse(c, text, CorrelationPearson, CorrelationSpearman)
}

// MarshalText returns the word of c.
func (c Correlation) MarshalText() ([]byte, error) { return []byte(c), nil }

// String returns the word of c.
func (c Correlation) String() string { return string(c) }

// UnmarshalText sets n to the word text: "positive", "negative", "both"
// or "" (unset). Another word is an error listing these.
func (n *CPMNetwork) UnmarshalText(text []byte) error {
	return enum.Parse(n, text, NetworkPositive, NetworkNegative, NetworkBoth)
}

// MarshalText returns the word of n.
func (n CPMNetwork) MarshalText() ([]byte, error) { return []byte(n), nil }

// String returns the word of n.
func (n CPMNetwork) String() string { return string(n) }

// Defaults.
const (
	DefaultInnerFolds = 5
	DefaultPThreshold = 0.01
	// DefaultMaxIter is the default max_iter of the logistic baselines:
	// L-BFGS iterations per fit.
	DefaultMaxIter = 1000
	// DefaultTol is the default tol of the logistic baselines: a fit stops
	// when no element of the gradient of its objective divided by n
	// exceeds it in absolute value (scikit-learn's tol has that meaning
	// for solver="lbfgs", default 1e-4).
	DefaultTol = 1e-6
)

// DefaultCs returns the default C grid of [model.logistic]: 13 values
// log-spaced from 1e-5 to 10, half a decade apart. A connectome has
// thousands of z-scored edges, each adding to every participant's linear
// predictor, so the useful C lies far below scikit-learn's default of 1.
func DefaultCs() []float64 {
	cs := make([]float64, 13)
	for i := range cs {
		cs[i] = math.Pow(10, -5+0.5*float64(i))
	}
	return cs
}

// DefaultAlphas returns the default relative penalty grid: 13 values
// log-spaced from 1e-3 to 1e3, half a decade apart.
func DefaultAlphas() []float64 {
	alphas := make([]float64, 13)
	for i := range alphas {
		alphas[i] = math.Pow(10, -3+0.5*float64(i))
	}
	return alphas
}

// MeanConfig configures the mean predictor ([model.mean]), which has no
// settings: it predicts the training fold's mean of each score.
type MeanConfig struct{}

// RidgeConfig configures ridge regression on connectome edges
// ([model.ridge]).
type RidgeConfig struct {
	// Input is "functional" (default), "structural" or "both".
	Input Input `toml:"input"`
	// Standardize is "zscore" (default) or "center": how each edge is
	// scaled with the training fold's mean and SD (population SD; an edge
	// constant over the fold is set to zero).
	Standardize Standardization `toml:"standardize"`
	// Alphas is the penalty grid searched by inner cross-validation, each
	// positive (zero is allowed and means least squares). Default
	// DefaultAlphas() when AlphaScale is "relative"; required when it is
	// "absolute". An empty grid (alphas = []) is an error.
	Alphas []float64 `toml:"alphas"`
	// AlphaScale is "relative" (default) or "absolute"; see AlphaRelative.
	AlphaScale AlphaScale `toml:"alpha_scale"`
	// InnerFolds is the number of inner folds used to choose alpha, at
	// least 2; nil takes DefaultInnerFolds (set it from Go as new(10)).
	// With a single alpha no inner cross-validation is run.
	InnerFolds *int `toml:"inner_folds"`
	// Inner is "kfold" (default: inner k-fold cross-validation) or "loo"
	// (efficient leave-one-out, about as costly as one fit; every alpha
	// must then be positive): see InnerKFold and InnerLOO.
	Inner InnerCV `toml:"inner"`
}

// KernelRidgeConfig configures kernel ridge regression between
// participants' edge vectors ([model.kernel_ridge]).
type KernelRidgeConfig struct {
	// Input is "functional" (default), "structural" or "both".
	Input Input `toml:"input"`
	// Kernel is "correlation" (default) or "linear".
	Kernel Kernel `toml:"kernel"`
	// Alphas, AlphaScale and InnerFolds are as in RidgeConfig.
	Alphas     []float64  `toml:"alphas"`
	AlphaScale AlphaScale `toml:"alpha_scale"`
	InnerFolds *int       `toml:"inner_folds"`
}

// CPMConfig configures connectome-based predictive modelling ([model.cpm]).
type CPMConfig struct {
	// Input is "functional" (default), "structural" or "both".
	Input Input `toml:"input"`
	// Correlation is "pearson" (default) or "spearman": how each edge is
	// correlated with the score.
	Correlation Correlation `toml:"correlation"`
	// PThreshold selects the edges whose two-sided p-value of r is below
	// it, in (0, 1]; nil takes DefaultPThreshold (set it from Go as
	// new(0.05)).
	PThreshold *float64 `toml:"p_threshold"`
	// Network is "both" (default), "positive" or "negative".
	Network CPMNetwork `toml:"network"`
}

// MajorityConfig configures the majority-class predictor
// ([model.majority]), which has no settings: it predicts the training
// fold's class frequencies as every participant's probabilities.
type MajorityConfig struct{}

// LogisticConfig configures L2-penalised logistic regression on
// connectome edges ([model.logistic]); see Logistic.
type LogisticConfig struct {
	// Input is "functional" (default), "structural" or "both".
	Input Input `toml:"input"`
	// Standardize is "zscore" (default) or "center", as for ridge.
	Standardize Standardization `toml:"standardize"`
	// Cs is the grid of inverse penalties C searched by inner
	// cross-validation, each positive and finite, with scikit-learn's
	// meaning: the penalty is ‖W‖²/(2C) beside the sum of the
	// participants' cross-entropies, so a larger C penalises less (C is
	// 1/alpha of kernel_logistic). nil takes DefaultCs(); an empty grid
	// (cs = []) is an error.
	Cs []float64 `toml:"cs"`
	// InnerFolds is the number of inner folds, stratified by class, used
	// to choose C, at least 2; nil takes DefaultInnerFolds. With a single
	// C no inner cross-validation is run.
	InnerFolds *int `toml:"inner_folds"`
	// ClassWeight is "none" (default) or "balanced"; see
	// ClassWeightBalanced.
	ClassWeight ClassWeight `toml:"class_weight"`
	// MaxIter is the most L-BFGS iterations of a fit, at least 1; nil
	// takes DefaultMaxIter.
	MaxIter *int `toml:"max_iter"`
	// Tol stops a fit when every element of the gradient of its objective
	// divided by n is below it in absolute value, positive; nil takes
	// DefaultTol.
	Tol *float64 `toml:"tol"`
}

// KernelLogisticConfig configures kernel logistic regression between
// participants' edge vectors ([model.kernel_logistic]); see
// KernelLogistic.
type KernelLogisticConfig struct {
	// Input is "functional" (default), "structural" or "both".
	Input Input `toml:"input"`
	// Kernel is "correlation" (default) or "linear", as for kernel ridge.
	Kernel Kernel `toml:"kernel"`
	// Alphas is the penalty grid searched by inner cross-validation, each
	// positive and finite (a zero penalty has no finite solution when the
	// kernel separates the classes). With alpha_scale = "relative"
	// (default) each is multiplied by trace(K)/n as for kernel ridge;
	// default DefaultAlphas() then, required with "absolute".
	Alphas     []float64  `toml:"alphas"`
	AlphaScale AlphaScale `toml:"alpha_scale"`
	// InnerFolds, ClassWeight, MaxIter and Tol are as in LogisticConfig.
	InnerFolds  *int        `toml:"inner_folds"`
	ClassWeight ClassWeight `toml:"class_weight"`
	MaxIter     *int        `toml:"max_iter"`
	Tol         *float64    `toml:"tol"`
}

// Kind returns the key of the chosen baseline ("mean", "ridge",
// "kernel_ridge", "cpm", "majority", "logistic" or "kernel_logistic"),
// or "" when none is set. With more than one set it returns the first;
// Validate reports that case.
func (c Config) Kind() string {
	if kinds := c.kinds(); len(kinds) > 0 {
		return kinds[0]
	}
	return ""
}

func (c Config) kinds() []string {
	var kinds []string
	for _, k := range []struct {
		set  bool
		name string
	}{
		{c.Mean != nil, kindMean},
		{c.Ridge != nil, kindRidge},
		{c.KernelRidge != nil, kindKernelRidge},
		{c.CPM != nil, kindCPM},
		{c.Majority != nil, kindMajority},
		{c.Logistic != nil, kindLogistic},
		{c.KernelLogistic != nil, kindKernelLogistic},
	} {
		if k.set {
			kinds = append(kinds, k.name)
		}
	}
	return kinds
}

// SetDefaults fills every unset field of the chosen baseline with its
// documented default.
func (c *Config) SetDefaults() {
	if r := c.Ridge; r != nil {
		setDefault(&r.Input, InputFunctional)
		setDefault(&r.Standardize, StandardizeZScore)
		setDefault(&r.Inner, InnerKFold)
		setAlphaDefaults(&r.Alphas, &r.AlphaScale, &r.InnerFolds)
	}
	if k := c.KernelRidge; k != nil {
		setDefault(&k.Input, InputFunctional)
		setDefault(&k.Kernel, KernelCorrelation)
		setAlphaDefaults(&k.Alphas, &k.AlphaScale, &k.InnerFolds)
	}
	if p := c.CPM; p != nil {
		setDefault(&p.Input, InputFunctional)
		setDefault(&p.Correlation, CorrelationPearson)
		setDefault(&p.Network, NetworkBoth)
		if p.PThreshold == nil {
			p.PThreshold = new(DefaultPThreshold)
		}
	}
	if l := c.Logistic; l != nil {
		setDefault(&l.Input, InputFunctional)
		setDefault(&l.Standardize, StandardizeZScore)
		if l.Cs == nil {
			l.Cs = DefaultCs()
		}
		setSolverDefaults(&l.InnerFolds, &l.ClassWeight, &l.MaxIter, &l.Tol)
	}
	if k := c.KernelLogistic; k != nil {
		setDefault(&k.Input, InputFunctional)
		setDefault(&k.Kernel, KernelCorrelation)
		setAlphaDefaults(&k.Alphas, &k.AlphaScale, &k.InnerFolds)
		setSolverDefaults(&k.InnerFolds, &k.ClassWeight, &k.MaxIter, &k.Tol)
	}
}

func setSolverDefaults(folds **int, cw *ClassWeight, maxIter **int, tol **float64) {
	if *folds == nil {
		*folds = new(DefaultInnerFolds)
	}
	setDefault(cw, ClassWeightNone)
	if *maxIter == nil {
		*maxIter = new(DefaultMaxIter)
	}
	if *tol == nil {
		*tol = new(DefaultTol)
	}
}

func setDefault[T ~string](s *T, def T) {
	if *s == "" {
		*s = def
	}
}

func setAlphaDefaults(alphas *[]float64, scale *AlphaScale, folds **int) {
	setDefault(scale, AlphaRelative)
	if *alphas == nil && *scale == AlphaRelative {
		*alphas = DefaultAlphas()
	}
	if *folds == nil {
		*folds = new(DefaultInnerFolds)
	}
}

// Validate reports the first setting that cannot work, naming its key
// (for example "model.ridge.alphas: must be positive, found -1"). It is an
// error to set no baseline or more than one. It expects SetDefaults to have
// been called.
func (c Config) Validate() error {
	switch kinds := c.kinds(); len(kinds) {
	case 0:
		return errors.New("model: no baseline table (mean, ridge, kernel_ridge, cpm, majority, logistic or kernel_logistic) is set")
	case 1:
	default:
		return fmt.Errorf("model: tables model.%s are all set; choose one", strings.Join(kinds, " and model."))
	}
	if r := c.Ridge; r != nil {
		const key = "model.ridge"
		if err := enum.Check(r.Input); err != nil {
			return fmt.Errorf("%s.input: %w", key, err)
		}
		if err := enum.Check(r.Standardize); err != nil {
			return fmt.Errorf("%s.standardize: %w", key, err)
		}
		if err := enum.Check(r.Inner); err != nil {
			return fmt.Errorf("%s.inner: %w", key, err)
		}
		if err := checkAlphas(key, r.Alphas, r.AlphaScale, r.InnerFolds); err != nil {
			return err
		}
		if r.Inner == InnerLOO && len(r.Alphas) > 1 {
			for _, a := range r.Alphas {
				if a == 0 {
					return fmt.Errorf("%s.alphas: must be positive with inner = %q, found 0", key, InnerLOO)
				}
			}
		}
		return nil
	}
	if k := c.KernelRidge; k != nil {
		const key = "model.kernel_ridge"
		if err := enum.Check(k.Input); err != nil {
			return fmt.Errorf("%s.input: %w", key, err)
		}
		if err := enum.Check(k.Kernel); err != nil {
			return fmt.Errorf("%s.kernel: %w", key, err)
		}
		return checkAlphas(key, k.Alphas, k.AlphaScale, k.InnerFolds)
	}
	if p := c.CPM; p != nil {
		const key = "model.cpm"
		if err := enum.Check(p.Input); err != nil {
			return fmt.Errorf("%s.input: %w", key, err)
		}
		if err := enum.Check(p.Correlation); err != nil {
			return fmt.Errorf("%s.correlation: %w", key, err)
		}
		if err := enum.Check(p.Network); err != nil {
			return fmt.Errorf("%s.network: %w", key, err)
		}
		if p.PThreshold == nil || !(*p.PThreshold > 0 && *p.PThreshold <= 1) {
			return fmt.Errorf("%s.p_threshold: must be in (0, 1], found %s", key, optional(p.PThreshold))
		}
	}
	if l := c.Logistic; l != nil {
		const key = "model.logistic"
		if err := enum.Check(l.Input); err != nil {
			return fmt.Errorf("%s.input: %w", key, err)
		}
		if err := enum.Check(l.Standardize); err != nil {
			return fmt.Errorf("%s.standardize: %w", key, err)
		}
		if len(l.Cs) == 0 {
			return fmt.Errorf("%s.cs: at least one C is required", key)
		}
		for _, v := range l.Cs {
			if !(v > 0) || math.IsInf(v, 1) {
				return fmt.Errorf("%s.cs: must be positive and finite, found %v", key, v)
			}
		}
		return checkSolver(key, l.InnerFolds, l.ClassWeight, l.MaxIter, l.Tol)
	}
	if k := c.KernelLogistic; k != nil {
		const key = "model.kernel_logistic"
		if err := enum.Check(k.Input); err != nil {
			return fmt.Errorf("%s.input: %w", key, err)
		}
		if err := enum.Check(k.Kernel); err != nil {
			return fmt.Errorf("%s.kernel: %w", key, err)
		}
		if err := checkAlphas(key, k.Alphas, k.AlphaScale, k.InnerFolds); err != nil {
			return err
		}
		for _, a := range k.Alphas {
			if a == 0 {
				return fmt.Errorf("%s.alphas: must be positive, found 0", key)
			}
		}
		return checkSolver(key, k.InnerFolds, k.ClassWeight, k.MaxIter, k.Tol)
	}
	return nil
}

func checkSolver(key string, folds *int, cw ClassWeight, maxIter *int, tol *float64) error {
	if folds == nil || *folds < 2 {
		return fmt.Errorf("%s.inner_folds: must be at least 2, found %s", key, optional(folds))
	}
	if err := enum.Check(cw); err != nil {
		return fmt.Errorf("%s.class_weight: %w", key, err)
	}
	if maxIter == nil || *maxIter < 1 {
		return fmt.Errorf("%s.max_iter: must be at least 1, found %s", key, optional(maxIter))
	}
	if tol == nil || !(*tol > 0) || math.IsInf(*tol, 1) {
		return fmt.Errorf("%s.tol: must be positive and finite, found %s", key, optional(tol))
	}
	return nil
}

// optional formats a setting that may be unset.
func optional[T int | float64](v *T) string {
	if v == nil {
		return "nothing"
	}
	return fmt.Sprint(*v)
}

func checkAlphas(key string, alphas []float64, scale AlphaScale, folds *int) error {
	if err := enum.Check(scale); err != nil {
		return fmt.Errorf("%s.alpha_scale: %w", key, err)
	}
	if len(alphas) == 0 {
		return fmt.Errorf("%s.alphas: at least one penalty is required with alpha_scale = %q", key, scale)
	}
	for _, a := range alphas {
		if !(a >= 0) || math.IsInf(a, 1) {
			return fmt.Errorf("%s.alphas: must be positive or zero, found %v", key, a)
		}
	}
	if folds == nil || *folds < 2 {
		return fmt.Errorf("%s.inner_folds: must be at least 2, found %s", key, optional(folds))
	}
	return nil
}

// New builds the chosen baseline for a run with the given number of score
// columns; seed drives the baseline's inner fold assignment. c must have
// passed Validate. Fit accepts a Y of any width: the permutation test adds
// columns to it.
func (c Config) New(targets int, seed int64) (model.Regressor, error) {
	if targets < 1 {
		return nil, fmt.Errorf("linear: need at least one target, found %d", targets)
	}
	if err := c.Validate(); err != nil {
		return nil, err
	}
	switch {
	case c.Mean != nil:
		return NewMean(), nil
	case c.Ridge != nil:
		return NewRidge(*c.Ridge, seed), nil
	case c.KernelRidge != nil:
		return NewKernelRidge(*c.KernelRidge, seed), nil
	case c.CPM != nil:
		return NewCPM(*c.CPM), nil
	}
	return nil, fmt.Errorf("model.%s: the kind predicts class labels, not scores", c.Kind())
}

// NewClassifier builds the chosen classification baseline (majority,
// logistic or kernel_logistic) for a label of the given number of classes;
// seed drives its inner fold assignment. c must pass Validate. A baseline
// for scores is an error.
func (c Config) NewClassifier(classes int, seed int64) (model.Classifier, error) {
	if classes < 2 {
		return nil, fmt.Errorf("linear: a label needs at least two classes, found %d", classes)
	}
	if err := c.Validate(); err != nil {
		return nil, err
	}
	switch {
	case c.Majority != nil:
		return NewMajority(classes), nil
	case c.Logistic != nil:
		return NewLogistic(*c.Logistic, classes, seed), nil
	case c.KernelLogistic != nil:
		return NewKernelLogistic(*c.KernelLogistic, classes, seed), nil
	}
	return nil, fmt.Errorf("model.%s: the kind predicts scores, not class labels", c.Kind())
}
