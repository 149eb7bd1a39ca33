package train

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"github.com/skein-neuro/skein/data"
)

// CV is the cross-validation scheme: the [cv] table of an experiment file.
// When the cohort has a grouping column (cohort.group), folds always keep
// each group whole. A nil setting takes its default; Go code sets one as
// CV{Folds: new(10)}.
type CV struct {
	// Folds is k of k-fold cross-validation, at least 2; nil takes the
	// default 5 (set it from Go as new(10)).
	Folds *int `toml:"folds"`
	// Repeats is how many times the k-fold cut is redone with a fresh
	// shuffle, at least 1; nil takes the default 1.
	Repeats *int `toml:"repeats"`
	// Stratify names a target whose quantiles the folds are balanced on;
	// "" (the default) does not stratify.
	Stratify string `toml:"stratify"`
	// InnerValidation is the inner validation part of each training fold,
	// which drives early stopping and model choice: a fraction of the
	// training fold when below 1, else a count of participants; 0 means no
	// inner validation. Default 0.2.
	InnerValidation *float64 `toml:"inner_validation"`
	// Confounds names covariates regressed out of every score, fitted on
	// each training fold alone (cross-validated confound regression).
	// Default none.
	Confounds []string `toml:"confounds"`
}

// SetDefaults fills every unset field with its documented default.
func (cv *CV) SetDefaults() {
	if cv.Folds == nil {
		cv.Folds = new(5)
	}
	if cv.Repeats == nil {
		cv.Repeats = new(1)
	}
	if cv.InnerValidation == nil {
		cv.InnerValidation = new(0.2)
	}
	if cv.Confounds == nil {
		cv.Confounds = []string{}
	}
}

// Validate reports the first setting that cannot work, naming its key.
// It expects SetDefaults to have been called.
func (cv CV) Validate() error {
	switch {
	case cv.Folds == nil || *cv.Folds < 2:
		return fmt.Errorf("cv.folds: need at least 2, found %s", optional(cv.Folds))
	case cv.Repeats == nil || *cv.Repeats < 1:
		return fmt.Errorf("cv.repeats: need at least 1, found %s", optional(cv.Repeats))
	case cv.InnerValidation != nil && (*cv.InnerValidation < 0 || math.IsNaN(*cv.InnerValidation) ||
		*cv.InnerValidation >= 1 && *cv.InnerValidation != math.Trunc(*cv.InnerValidation)):
		return fmt.Errorf("cv.inner_validation: want a fraction in [0, 1) or a whole count, found %v", *cv.InnerValidation)
	}
	return nil
}

// optional formats a setting that may be unset.
func optional(v *int) string {
	if v == nil {
		return "nothing"
	}
	return fmt.Sprint(*v)
}

// innerCount and innerFraction read InnerValidation as a count or a fraction.
func (cv CV) innerCount() int {
	if v := *cv.InnerValidation; v >= 1 {
		return int(v)
	}
	return 0
}

func (cv CV) innerFraction() float64 {
	if v := *cv.InnerValidation; v < 1 {
		return v
	}
	return 0
}

// folds returns the fold scheme of the experiment for the cohort.
func (cv CV) folds(seed int64, c *data.Cohort) Folds {
	f := Folds{K: *cv.Folds, Repeats: *cv.Repeats, Seed: uint64(seed), Groups: Groups(c)}
	if t := slices.Index(c.Targets, cv.Stratify); cv.Stratify != "" && t >= 0 {
		f.Strata = make([]float64, len(c.Participants))
		for i, p := range c.Participants {
			f.Strata[i] = p.Scores[t]
		}
	}
	return f
}

// checkAgainst reports every setting that names what the cohort lacks:
// a cv.stratify target or cv.confounds covariate, joined (errors.Join).
func (cv CV) checkAgainst(c *data.Cohort) error {
	var errs []error
	if cv.Stratify != "" && !slices.Contains(c.Targets, cv.Stratify) {
		errs = append(errs, fmt.Errorf("cv.stratify: %q is not a target of the cohort (targets: %s)", cv.Stratify, wordList(c.Targets)))
	}
	for _, name := range cv.Confounds {
		if !slices.Contains(c.Covariates, name) {
			errs = append(errs, fmt.Errorf("cv.confounds: %q is not a covariate of the cohort (covariates: %s)", name, wordList(c.Covariates)))
		}
	}
	return errors.Join(errs...)
}
