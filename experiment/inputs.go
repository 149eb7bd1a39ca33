package experiment

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"strings"

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
	// (ExperimentFile), CohortJSON the report as CohortFile holds it and
	// InputsJSON the digests of the cohort's files as InputsFile holds
	// them.
	Resolved, CohortJSON, InputsJSON []byte
}

// CheckInputs loads the cohort of exp, read from path, and checks
// everything a run would refuse, before anything is trained: the cohort's
// files (data.Check), the sweeps (Expand, which validates the models they
// make, names included) and every setting against the cohort
// (train.Design.Check: folds against participants and groups, inner
// validation, stratify and confound columns, models' inner folds; the same
// on the sample-size curve's subsets). skein check and skein run both call
// it, so that check passes exactly what run accepts, but for an experiment
// without models, which check accepts (a cohort-only file) and Run
// refuses. Every problem found is returned at once, joined (errors.Join),
// and the error matches ErrInput; Inputs.Report is set whenever the
// cohort's files could be read, even with an error.
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
			d := expanded.Design()
			err := d.Check(cohort)
			if ss := expanded.SampleSize; err == nil && len(ss.Fractions) > 0 {
				err = d.CheckSampleSizes(cohort, ss.Fractions, ss.Models)
			}
			errs = append(errs, prefixEach(path, err))
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
	if in.InputsJSON, err = json.MarshalIndent(inputsRecord{Files: cohort.Files}, "", "  "); err != nil {
		return in, err
	}
	return in, nil
}

// CheckFile reads the experiment file at path and checks it as
// CheckInputs does, for skein check: when the file decodes but some
// settings cannot work (Validate), the cohort is still loaded and checked,
// provided its own tables are sound, so that the problems of the file and
// of the cohort's files are reported together. The error joins every
// problem and matches ErrInput; Inputs.Report is set whenever the cohort's
// files could be read.
func CheckFile(path string) (*Inputs, error) {
	exp, err := readExperiment(path)
	switch {
	case exp == nil:
		return &Inputs{}, badInput(err)
	case err == nil:
		return CheckInputs(path, exp)
	case exp.Cohort.Validate() != nil || exp.Preprocess.Validate() != nil:
		return &Inputs{}, badInput(err) // the cohort cannot be read as written
	}
	in := &Inputs{}
	cohort, report, cerr := data.Check(exp.Cohort, exp.Preprocess, exp.Dir)
	in.Cohort, in.Report = cohort, report
	return in, badInput(errors.Join(err, cerr))
}

// inputsRecord is the content of InputsFile.
type inputsRecord struct {
	Files []data.FileDigest `json:"files"`
}

// checkInputsUnchanged makes sure the cohort files a resumed work folder
// was made from are those of now (InputsFile; a folder without one, from
// an older skein, is compared by CohortFile alone). The error names the
// files that changed, appeared or went, and matches ErrInput. what says
// what would mix old and new ("finished units"), hint how to start over.
func checkInputsUnchanged(rd *RunDir, in *Inputs, what, hint string) error {
	if old, err := os.ReadFile(rd.WorkPath(CohortFile)); err == nil && !bytes.Equal(old, in.CohortJSON) {
		if _, err := os.Stat(rd.WorkPath(InputsFile)); errors.Is(err, fs.ErrNotExist) {
			return badInputf("%s: the cohort changed since its %s ran (%s differs); %s", rd.Partial, what, CohortFile, hint)
		}
	}
	raw, err := os.ReadFile(rd.WorkPath(InputsFile))
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	if err != nil {
		return err
	}
	var old inputsRecord
	if err := json.Unmarshal(raw, &old); err != nil {
		return fmt.Errorf("%s: %w", rd.WorkPath(InputsFile), err)
	}
	if changes := fileChanges(old.Files, in.Cohort.Files); len(changes) > 0 {
		return badInputf("%s: the data changed since its %s ran, which would mix old and new results: %s; %s",
			rd.Partial, what, strings.Join(changes, "; "), hint)
	}
	return nil
}

// fileChanges lists, in words, the files of now that differ from before:
// changed, new or gone; at most six, then a count of the rest.
func fileChanges(before, now []data.FileDigest) []string {
	was := make(map[string]string, len(before))
	for _, f := range before {
		was[f.Path] = f.SHA256
	}
	var out []string
	for _, f := range now {
		switch sum, ok := was[f.Path]; {
		case !ok:
			out = append(out, f.Path+" is new")
		case sum != f.SHA256:
			out = append(out, f.Path+" changed")
		}
		delete(was, f.Path)
	}
	for _, f := range before {
		if _, ok := was[f.Path]; ok {
			out = append(out, f.Path+" is no longer read")
		}
	}
	if len(out) > 6 {
		out = append(out[:6], fmt.Sprintf("and %d more", len(out)-6))
	}
	return out
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
