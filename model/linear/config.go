package linear

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/skein-neuro/skein/model"
)

// Config chooses one baseline and its settings: the sub-tables of a
// [[model]] entry of an experiment file, [model.mean], [model.ridge],
// [model.kernel_ridge] or [model.cpm]. Exactly one field is set; a Config
// with none set chooses no baseline (Kind returns "").
type Config struct {
	Mean        *MeanConfig        `toml:"mean,omitempty"`
	Ridge       *RidgeConfig       `toml:"ridge,omitempty"`
	KernelRidge *KernelRidgeConfig `toml:"kernel_ridge,omitempty"`
	CPM         *CPMConfig         `toml:"cpm,omitempty"`
}

// Values of the input key: which connectome's edges a baseline reads.
const (
	InputFunctional = "functional" // upper triangle of Participant.Functional
	InputStructural = "structural" // upper triangle of Participant.Structural
	InputBoth       = "both"       // functional edges, then structural edges
)

// Values of the alpha_scale key.
const (
	// AlphaRelative multiplies each alpha by the mean eigenvalue of the
	// training fold's kernel, trace(K)/n, which for z-scored edges is the
	// number of non-constant edges: the same grid then suits any cohort size.
	AlphaRelative = "relative"
	// AlphaAbsolute uses each alpha as the penalty itself, as
	// scikit-learn's Ridge and KernelRidge do.
	AlphaAbsolute = "absolute"
)

// Values of the standardize key of [model.ridge].
const (
	StandardizeZScore = "zscore" // subtract the training mean, divide by the training SD
	StandardizeCenter = "center" // subtract the training mean only
)

// Values of the kernel key of [model.kernel_ridge].
const (
	KernelLinear      = "linear"      // K(a, b) = a·b
	KernelCorrelation = "correlation" // K(a, b) = Pearson r of a and b
)

// Values of the correlation key of [model.cpm].
const (
	CorrelationPearson  = "pearson"
	CorrelationSpearman = "spearman"
)

// Values of the network key of [model.cpm].
const (
	NetworkPositive = "positive" // y ~ positive strength
	NetworkNegative = "negative" // y ~ negative strength
	NetworkBoth     = "both"     // y ~ positive strength + negative strength
)

// Defaults.
const (
	DefaultInnerFolds = 5
	DefaultPThreshold = 0.01
)

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
	Input string `toml:"input"`
	// Standardize is "zscore" (default) or "center": how each edge is
	// scaled with the training fold's mean and SD (population SD; an edge
	// constant over the fold is set to zero).
	Standardize string `toml:"standardize"`
	// Alphas is the penalty grid searched by inner cross-validation, each
	// positive (zero is allowed and means least squares). Default
	// DefaultAlphas() when AlphaScale is "relative"; required when it is
	// "absolute".
	Alphas []float64 `toml:"alphas"`
	// AlphaScale is "relative" (default) or "absolute"; see AlphaRelative.
	AlphaScale string `toml:"alpha_scale"`
	// InnerFolds is the number of inner folds used to choose alpha
	// (default 5, at least 2). With a single alpha no inner
	// cross-validation is run.
	InnerFolds int `toml:"inner_folds"`
}

// KernelRidgeConfig configures kernel ridge regression between
// participants' edge vectors ([model.kernel_ridge]).
type KernelRidgeConfig struct {
	// Input is "functional" (default), "structural" or "both".
	Input string `toml:"input"`
	// Kernel is "correlation" (default) or "linear".
	Kernel string `toml:"kernel"`
	// Alphas, AlphaScale and InnerFolds are as in RidgeConfig.
	Alphas     []float64 `toml:"alphas"`
	AlphaScale string    `toml:"alpha_scale"`
	InnerFolds int       `toml:"inner_folds"`
}

// CPMConfig configures connectome-based predictive modelling ([model.cpm]).
type CPMConfig struct {
	// Input is "functional" (default), "structural" or "both".
	Input string `toml:"input"`
	// Correlation is "pearson" (default) or "spearman": how each edge is
	// correlated with the score.
	Correlation string `toml:"correlation"`
	// PThreshold selects the edges whose two-sided p-value of r is below
	// it (default 0.01; in (0, 1]).
	PThreshold float64 `toml:"p_threshold"`
	// Network is "both" (default), "positive" or "negative".
	Network string `toml:"network"`
}

// Kind returns the key of the chosen baseline ("mean", "ridge",
// "kernel_ridge" or "cpm"), or "" when none is set. With more than one
// set it returns the first; Validate reports that case.
func (c Config) Kind() string {
	switch {
	case c.Mean != nil:
		return kindMean
	case c.Ridge != nil:
		return kindRidge
	case c.KernelRidge != nil:
		return kindKernelRidge
	case c.CPM != nil:
		return kindCPM
	}
	return ""
}

func (c Config) kinds() []string {
	var kinds []string
	if c.Mean != nil {
		kinds = append(kinds, kindMean)
	}
	if c.Ridge != nil {
		kinds = append(kinds, kindRidge)
	}
	if c.KernelRidge != nil {
		kinds = append(kinds, kindKernelRidge)
	}
	if c.CPM != nil {
		kinds = append(kinds, kindCPM)
	}
	return kinds
}

// SetDefaults fills every unset field of the chosen baseline with its
// documented default.
func (c *Config) SetDefaults() {
	if r := c.Ridge; r != nil {
		setDefault(&r.Input, InputFunctional)
		setDefault(&r.Standardize, StandardizeZScore)
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
		if p.PThreshold == 0 {
			p.PThreshold = DefaultPThreshold
		}
	}
}

func setDefault(s *string, def string) {
	if *s == "" {
		*s = def
	}
}

func setAlphaDefaults(alphas *[]float64, scale *string, folds *int) {
	setDefault(scale, AlphaRelative)
	if *alphas == nil && *scale == AlphaRelative {
		*alphas = DefaultAlphas()
	}
	if *folds == 0 {
		*folds = DefaultInnerFolds
	}
}

// Validate reports the first setting that cannot work, naming its key
// (for example "model.ridge.alphas: must be positive, found -1"). It is an
// error to set no baseline or more than one.
func (c Config) Validate() error {
	switch kinds := c.kinds(); len(kinds) {
	case 0:
		return errors.New("model: no baseline table (mean, ridge, kernel_ridge or cpm) is set")
	case 1:
	default:
		return fmt.Errorf("model: tables model.%s are all set; choose one", strings.Join(kinds, " and model."))
	}
	if r := c.Ridge; r != nil {
		const key = "model.ridge"
		if err := checkEnum(key+".input", r.Input, InputFunctional, InputStructural, InputBoth); err != nil {
			return err
		}
		if err := checkEnum(key+".standardize", r.Standardize, StandardizeZScore, StandardizeCenter); err != nil {
			return err
		}
		return checkAlphas(key, r.Alphas, r.AlphaScale, r.InnerFolds)
	}
	if k := c.KernelRidge; k != nil {
		const key = "model.kernel_ridge"
		if err := checkEnum(key+".input", k.Input, InputFunctional, InputStructural, InputBoth); err != nil {
			return err
		}
		if err := checkEnum(key+".kernel", k.Kernel, KernelLinear, KernelCorrelation); err != nil {
			return err
		}
		return checkAlphas(key, k.Alphas, k.AlphaScale, k.InnerFolds)
	}
	if p := c.CPM; p != nil {
		const key = "model.cpm"
		if err := checkEnum(key+".input", p.Input, InputFunctional, InputStructural, InputBoth); err != nil {
			return err
		}
		if err := checkEnum(key+".correlation", p.Correlation, CorrelationPearson, CorrelationSpearman); err != nil {
			return err
		}
		if err := checkEnum(key+".network", p.Network, NetworkPositive, NetworkNegative, NetworkBoth); err != nil {
			return err
		}
		if !(p.PThreshold > 0 && p.PThreshold <= 1) {
			return fmt.Errorf("%s.p_threshold: must be in (0, 1], found %v", key, p.PThreshold)
		}
	}
	return nil
}

func checkEnum(key, value string, allowed ...string) error {
	for _, a := range allowed {
		if value == a {
			return nil
		}
	}
	return fmt.Errorf("%s: must be %s, found %q", key, quoteList(allowed), value)
}

func quoteList(values []string) string {
	quoted := make([]string, len(values))
	for i, v := range values {
		quoted[i] = fmt.Sprintf("%q", v)
	}
	if len(quoted) == 1 {
		return quoted[0]
	}
	return strings.Join(quoted[:len(quoted)-1], ", ") + " or " + quoted[len(quoted)-1]
}

func checkAlphas(key string, alphas []float64, scale string, folds int) error {
	if err := checkEnum(key+".alpha_scale", scale, AlphaRelative, AlphaAbsolute); err != nil {
		return err
	}
	if len(alphas) == 0 {
		return fmt.Errorf("%s.alphas: at least one penalty is required with alpha_scale = %q", key, scale)
	}
	for _, a := range alphas {
		if !(a >= 0) || math.IsInf(a, 1) {
			return fmt.Errorf("%s.alphas: must be positive or zero, found %v", key, a)
		}
	}
	if folds < 2 {
		return fmt.Errorf("%s.inner_folds: must be at least 2, found %d", key, folds)
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
	default:
		return NewCPM(*c.CPM), nil
	}
}
