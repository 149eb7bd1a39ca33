package data

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"strings"

	"github.com/skein-neuro/skein/internal/enum"
)

// Placeholder is the mark in a path template that stands for a
// participant's participant_id, as in "fc/{participant_id}_fc.tsv".
const Placeholder = "{participant_id}"

// Source says where a cohort's files are and how to read them: the
// [cohort] table of an experiment file. Paths are relative to the folder of
// the experiment file (Load's baseDir) unless absolute. For example:
//
//	[cohort]
//	participants = "participants.tsv"
//	targets = ["recall", "fluency"]
//	covariates = ["age", "sex", "motion"]
//	group = "family"
//	site = "scanner"
//	regions = "regions.txt"
//	min_participants = 20
//	outlier_sd = 3.0
//	unlisted = "error"
//
//	[cohort.functional]
//	files = "fc/{participant_id}_fc.tsv"
//	values = "correlation"
//	symmetry_tolerance = 1e-6
//
//	[cohort.structural]
//	stack = "sc.npy"
//	stack_ids = "sc_ids.txt"
type Source struct {
	// Participants is the participants table, a .tsv (tab-separated, no
	// quoting, as BIDS writes it) or .csv (RFC 4180) file with a header
	// row holding a participant_id column. Missing cells are empty or "n/a".
	Participants string `toml:"participants"`
	// Targets names the score columns to predict; at least one.
	Targets []string `toml:"targets"`
	// Covariates names covariate columns (optional). A column whose
	// non-missing cells are all numbers is numeric; a column whose cells
	// are all text is coded by its sorted distinct values (byte order) as
	// 0, 1, ..., k-1; a column mixing both is an error.
	Covariates []string `toml:"covariates"`
	// Group names an optional grouping column (family or scanning site).
	// A participant with no value in it is excluded.
	Group string `toml:"group"`
	// Site names an optional column of scanning sites (text; any label),
	// which harmonisation (ComBat), site-aware folds and the site
	// confound read. Unlike a group, a participant with no value in it is
	// an error naming the row: a run on sites must know every site. It may
	// be the same column as Group, which then also keeps a site's
	// participants in one fold.
	Site string `toml:"site"`
	// Regions is an optional file of region labels, one a line. Without
	// it, labels come from the matrices' header rows or are "R001", "R002"...
	Regions string `toml:"regions"`
	// MinParticipants is the smallest cohort Load accepts after
	// exclusions, at least 1; nil takes the default 10 (set it from Go as
	// new(20)).
	MinParticipants *int `toml:"min_participants"`
	// OutlierSD is the threshold, in robust standard deviations
	// (1.4826 × median absolute deviation), beyond which a participant's
	// mean functional connectivity or structural density is flagged as an
	// outlier; positive; nil takes the default 3 (set it from Go as
	// new(2.5)). Flags are reported, never excluded.
	OutlierSD *float64 `toml:"outlier_sd"`
	// Unlisted says what to do with matrix files (or stack_ids entries)
	// whose participant has no row in the participants table: "error"
	// (default) fails, "report" lists them in the report and goes on.
	Unlisted UnlistedPolicy `toml:"unlisted"`
	// Functional locates the functional connectomes ([cohort.functional]).
	Functional *Modality `toml:"functional"`
	// Structural locates the structural connectomes ([cohort.structural]).
	Structural *Modality `toml:"structural"`
}

// Modality locates one modality's p × p matrices: either one file per
// participant by path template, or one stacked n × p × p .npy file with a
// list of the participants in its order.
type Modality struct {
	// Files is a path template holding "{participant_id}", for example
	// "fc/{participant_id}_fc.tsv". Files ending in .npy are NumPy arrays
	// (2-D, float32 or float64, either byte order, C or Fortran order);
	// any other file is delimited text (tab, comma or white space, with an
	// optional header row and first column of region labels).
	Files string `toml:"files"`
	// Stack is a NumPy .npy file holding an n × p × p array, set instead
	// of Files.
	Stack string `toml:"stack"`
	// StackIDs is a text file naming the participant_id of each of the
	// stack's n matrices, one a line, in order. Required with Stack.
	StackIDs string `toml:"stack_ids"`
	// Values is "correlation" (default for functional: every entry must lie
	// within [-1, 1]) or "any" (no range check). Structural matrices are
	// always checked non-negative and take no Values key.
	Values ValueRange `toml:"values"`
	// SymmetryTolerance is the largest |a_ij − a_ji| accepted (absolute);
	// default 1e-6. Zero demands exact symmetry.
	SymmetryTolerance *float64 `toml:"symmetry_tolerance"`
}

// DefaultSymmetryTolerance is the default of symmetry_tolerance.
const DefaultSymmetryTolerance = 1e-6

// ValueRange is the value of the key values of [cohort.functional]:
// ValuesCorrelation or ValuesAny ("" is unset).
type ValueRange string

// Values settings of a functional modality.
const (
	ValuesCorrelation ValueRange = "correlation"
	ValuesAny         ValueRange = "any"
)

// UnmarshalText sets v to the word text: "correlation", "any" or ""
// (unset). Another word is an error listing these.
func (v *ValueRange) UnmarshalText(text []byte) error {
	return enum.Parse(v, text, ValuesCorrelation, ValuesAny)
}

// MarshalText returns the word of v.
func (v ValueRange) MarshalText() ([]byte, error) { return []byte(v), nil }

// String returns the word of v.
func (v ValueRange) String() string { return string(v) }

// UnlistedPolicy is the value of the key cohort.unlisted: UnlistedError or
// UnlistedReport ("" is unset).
type UnlistedPolicy string

// Unlisted settings.
const (
	UnlistedError  UnlistedPolicy = "error"
	UnlistedReport UnlistedPolicy = "report"
)

// UnmarshalText sets u to the word text: "error", "report" or "" (unset).
// Another word is an error listing these.
func (u *UnlistedPolicy) UnmarshalText(text []byte) error {
	return enum.Parse(u, text, UnlistedError, UnlistedReport)
}

// MarshalText returns the word of u.
func (u UnlistedPolicy) MarshalText() ([]byte, error) { return []byte(u), nil }

// String returns the word of u.
func (u UnlistedPolicy) String() string { return string(u) }

// Defaults of Source.
const (
	DefaultMinParticipants = 10
	DefaultOutlierSD       = 3.0
)

// SetDefaults fills every unset field with its documented default.
// Validate expects it to have been called.
func (s *Source) SetDefaults() {
	if s.MinParticipants == nil {
		s.MinParticipants = new(DefaultMinParticipants)
	}
	if s.OutlierSD == nil {
		s.OutlierSD = new(DefaultOutlierSD)
	}
	if s.Unlisted == "" {
		s.Unlisted = UnlistedError
	}
	for _, m := range []*Modality{s.Functional, s.Structural} {
		if m != nil && m.SymmetryTolerance == nil {
			tol := DefaultSymmetryTolerance
			m.SymmetryTolerance = &tol
		}
	}
	if s.Functional != nil && s.Functional.Values == "" {
		s.Functional.Values = ValuesCorrelation
	}
}

// Validate reports the first setting that cannot work, naming its key.
func (s Source) Validate() error { return s.validate(true) }

// validate is Validate; needTargets is false for participants to be
// predicted, whose scores are unknown.
func (s Source) validate(needTargets bool) error {
	if s.Participants == "" {
		return errors.New(`cohort: key "participants" is required`)
	}
	if ext := strings.ToLower(filepath.Ext(s.Participants)); ext != ".tsv" && ext != ".csv" {
		return fmt.Errorf("cohort.participants: %q must end in .tsv or .csv, found %q", s.Participants, ext)
	}
	if needTargets && len(s.Targets) == 0 {
		return errors.New(`cohort: key "targets" needs at least one score column`)
	}
	seen := map[string]string{}
	note := func(key, col string) error {
		if col == "" {
			return fmt.Errorf("cohort.%s: empty column name", key)
		}
		if col == "participant_id" {
			return fmt.Errorf("cohort.%s: %q is the id column, not a %s", key, col, strings.TrimSuffix(key, "s"))
		}
		if prev, ok := seen[col]; ok {
			return fmt.Errorf("cohort.%s: column %q is already named in cohort.%s", key, col, prev)
		}
		seen[col] = key
		return nil
	}
	for _, t := range s.Targets {
		if err := note("targets", t); err != nil {
			return err
		}
	}
	for _, c := range s.Covariates {
		if err := note("covariates", c); err != nil {
			return err
		}
	}
	if s.Group != "" {
		if err := note("group", s.Group); err != nil {
			return err
		}
	}
	if s.Site != "" {
		if s.Site == "participant_id" {
			return fmt.Errorf("cohort.site: %q is the id column, not a site", s.Site)
		}
		if prev, ok := seen[s.Site]; ok && prev != "group" {
			return fmt.Errorf("cohort.site: column %q is already named in cohort.%s", s.Site, prev)
		}
	}
	if s.MinParticipants == nil || *s.MinParticipants < 1 {
		return fmt.Errorf("cohort.min_participants: must be at least 1, found %s", optionalInt(s.MinParticipants))
	}
	if s.OutlierSD == nil || !(*s.OutlierSD > 0) {
		return fmt.Errorf("cohort.outlier_sd: must be positive, found %s", optionalFloat(s.OutlierSD))
	}
	if err := enum.Check(s.Unlisted); err != nil {
		return fmt.Errorf("cohort.unlisted: %w", err)
	}
	if s.Functional == nil && s.Structural == nil {
		return errors.New("cohort: needs a [cohort.functional] or [cohort.structural] table, or both")
	}
	if s.Functional != nil {
		if err := s.Functional.validate("cohort.functional"); err != nil {
			return err
		}
		if err := enum.Check(s.Functional.Values); err != nil {
			return fmt.Errorf("cohort.functional.values: %w", err)
		}
	}
	if s.Structural != nil {
		if err := s.Structural.validate("cohort.structural"); err != nil {
			return err
		}
		if s.Structural.Values != "" {
			return errors.New(`cohort.structural.values: structural matrices are always checked non-negative; remove the key`)
		}
	}
	return nil
}

func (m Modality) validate(key string) error {
	switch {
	case m.Files != "" && m.Stack != "":
		return fmt.Errorf(`%s: set either "files" or "stack", not both`, key)
	case m.Files == "" && m.Stack == "":
		return fmt.Errorf(`%s: set "files" (a path template) or "stack" (an n × p × p .npy file)`, key)
	case m.Files != "":
		if m.StackIDs != "" {
			return fmt.Errorf(`%s.stack_ids: goes with "stack", not "files"`, key)
		}
		if n := strings.Count(m.Files, Placeholder); n != 1 {
			return fmt.Errorf("%s.files: template %q must hold %s exactly once, found %d", key, m.Files, Placeholder, n)
		}
		if rest := strings.ReplaceAll(m.Files, Placeholder, ""); strings.ContainsAny(rest, "{}") {
			return fmt.Errorf("%s.files: template %q: the only placeholder is %s", key, m.Files, Placeholder)
		}
	case m.Stack != "":
		if !strings.EqualFold(filepath.Ext(m.Stack), ".npy") {
			return fmt.Errorf("%s.stack: %q must be a .npy file", key, m.Stack)
		}
		if m.StackIDs == "" {
			return fmt.Errorf(`%s: "stack" needs "stack_ids", the file listing its participants in order`, key)
		}
	}
	if m.SymmetryTolerance == nil || !(*m.SymmetryTolerance >= 0) || math.IsInf(*m.SymmetryTolerance, 1) {
		return fmt.Errorf("%s.symmetry_tolerance: must be a finite number, zero or positive, found %s", key, optionalFloat(m.SymmetryTolerance))
	}
	return nil
}

func optionalFloat(v *float64) string {
	if v == nil {
		return "nothing"
	}
	return fmt.Sprint(*v)
}

func optionalInt(v *int) string {
	if v == nil {
		return "nothing"
	}
	return fmt.Sprint(*v)
}
