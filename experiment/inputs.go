package experiment

import (
	"encoding/json"
	"errors"
	"fmt"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/data"
)

// Inputs is an experiment ready to run: its file read, its cohort loaded
// and checked, its sweeps expanded and every setting checked against the
// cohort.
type Inputs struct {
	// Experiment is the experiment with its sweeps expanded into models;
	// Variants are the sweeps' points.
	Experiment *Experiment
	Variants   []Variant
	// Cohort is the checked cohort; Report what data.Check found in it,
	// which skein check prints and a run keeps as CohortFile.
	Cohort *data.Cohort
	Report *data.Report
	// Resolved is the experiment file with every default filled in
	// (ExperimentFile), and CohortJSON the report as CohortFile holds it.
	Resolved, CohortJSON []byte
}

// CheckInputs loads the cohort of exp, read from path, and checks
// everything a run would refuse, before anything is trained: the cohort's
// files (data.Check), the sweeps (Expand, which validates the models
// they make, names included), and
// every setting against the cohort (train.Design.Check: folds against
// participants and groups, inner validation, stratify and confound
// columns, models' inner folds). skein check and skein run both call it,
// so that check passes exactly what run accepts, but for an experiment
// without models, which check accepts (a cohort-only file) and Run
// refuses. Every problem found is
// returned at once, joined (errors.Join), and the error matches ErrInput;
// Inputs.Report is set whenever the cohort's files could be read, even
// with an error.
func CheckInputs(path string, exp *Experiment) (*Inputs, error) {
	in := &Inputs{}
	var errs []error
	cohort, report, err := data.Check(exp.Cohort, exp.Preprocess, exp.Dir)
	in.Cohort, in.Report = cohort, report
	if err != nil {
		errs = append(errs, err)
	}
	expanded, variants, err := exp.Expand()
	if err != nil {
		errs = append(errs, fmt.Errorf("%s: %w", path, err))
	} else {
		in.Experiment, in.Variants = expanded, variants
		if cohort != nil && len(expanded.Models) > 0 {
			errs = append(errs, prefixEach(path, expanded.Design().Check(cohort)))
		}
	}
	if err := errors.Join(errs...); err != nil {
		return in, badInput(err)
	}
	if in.Resolved, err = toml.Marshal(in.Experiment); err != nil {
		return in, err
	}
	if in.CohortJSON, err = json.MarshalIndent(report, "", "  "); err != nil {
		return in, fmt.Errorf("%s: %w", CohortFile, err)
	}
	return in, nil
}

// prefixEach prefixes the message of err, or of each error err joins
// (errors.Join), with "PATH: ".
func prefixEach(path string, err error) error {
	if err == nil {
		return nil
	}
	if ie, ok := err.(*inputError); ok {
		return badInput(prefixEach(path, ie.err))
	}
	if j, ok := err.(interface{ Unwrap() []error }); ok {
		parts := j.Unwrap()
		out := make([]error, len(parts))
		for i, e := range parts {
			out[i] = prefixEach(path, e)
		}
		return errors.Join(out...)
	}
	return fmt.Errorf("%s: %w", path, err)
}
