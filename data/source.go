package data

import (
	"errors"
	"fmt"
	"maps"
	"math"
	"path/filepath"
	"slices"
	"strings"

	"github.com/skein-neuro/skein/internal/enum"
)

// Placeholder is the mark in a path template that stands for a
// participant's id (the value in the id column, whatever its name), as in
// "fc/{participant_id}_fc.tsv".
const Placeholder = "{participant_id}"

// Source says where a cohort's files are and how to read them: the
// [cohort] table of an experiment file. Paths are relative to the folder of
// the experiment file (Load's baseDir) unless absolute. For example:
//
//	[cohort]
//	participants = "participants.tsv"
//	id_column = "participant_id"
//	targets = ["recall", "fluency"]
//	labels = ["diagnosis"]
//	covariates = ["age", "sex", "motion"]
//	group = "family"
//	site = "scanner"
//	regions = "regions.txt"
//	min_participants = 20
//	outlier_sd = 3.0
//	unlisted = "error"
//	on_bad_participant = "exclude"
//
//	[cohort.classes]
//	diagnosis = ["control", "patient"]
//
//	[cohort.exclude]
//	sub-017 = "region 12 lost in acquisition"
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
	// row holding the id column. Missing cells are empty or "n/a".
	Participants string `toml:"participants"`
	// IDColumn names the column of the participants table holding each
	// participant's id, the value that replaces Placeholder in path
	// templates and that a stack's stack_ids list. Default
	// "participant_id", the BIDS convention.
	IDColumn string `toml:"id_column"`
	// Targets names the score columns to predict. Targets and Labels
	// together name at least one column.
	Targets []string `toml:"targets"`
	// Labels names class-label columns to predict (categorical targets
	// such as a diagnosis): text or integer values, missing cells empty or
	// "n/a". A participant's class is the index of its value among the
	// label's classes (Cohort.Classes), −1 when missing. Default none.
	Labels []string `toml:"labels"`
	// Classes fixes, per label ([cohort.classes], label = ["a", "b"]), the
	// order of its classes: at least two distinct names, each present
	// among the included participants; for a binary label the second is
	// the positive class. A value of the column outside the list is an
	// error naming its row. A label not listed takes its values sorted:
	// numerically when every value is an integer, else in byte order.
	Classes map[string][]string `toml:"classes"`
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
	// Exclude leaves participants out by id, each with the reason a
	// person gives ([cohort.exclude], id = "reason"): they are listed
	// among the exclusions with that reason, and their table cells and
	// files are not read. An id without a table row is an error, as is an
	// empty reason.
	Exclude map[string]string `toml:"exclude"`
	// OnBadParticipant says what a participant whose own matrix fails a
	// check (unreadable, not square or not of the cohort's p, not finite,
	// not symmetric within tolerance, out of range, failing
	// preprocessing) does to the cohort: "error" (default) fails the
	// whole check with every such problem listed; "exclude" leaves the
	// participant out with the failed check as the reason. Problems of
	// the participants table or of a whole stack are always errors.
	OnBadParticipant BadParticipantPolicy `toml:"on_bad_participant"`
	// Storage says how the preprocessed matrices are kept in memory:
	// "float64" (default: each p × p matrix whole, Participant.Functional
	// and Structural) or "float32" (the upper triangle and diagonal in
	// float32, Participant.Compact: a little over a quarter of the
	// memory, results changed by rounding only; see StorageFloat32).
	Storage Storage `toml:"storage"`
	// Functional locates the functional connectomes ([cohort.functional]).
	Functional *Modality `toml:"functional"`
	// Structural locates the structural connectomes ([cohort.structural]).
	Structural *Modality `toml:"structural"`
}

// Modality locates one modality's p × p matrices: either one file per
// participant by path template, or one stacked n × p × p file with the
// participants in its order.
//
// The format of a file is chosen by its extension (case-insensitive):
//
//   - .npy: a NumPy array, float32 or float64, either byte order, C or
//     Fortran order;
//   - .npz: a NumPy archive (numpy.savez, numpy.savez_compressed) of named
//     arrays, the one named by Variable;
//   - .mat: a MATLAB MAT-file, the numeric variable named by Variable:
//     level 5 (save -v6 or -v7, compressed or not) or v7.3 (HDF5 inside;
//     variables stored contiguously or in chunks indexed by a version 1
//     B-tree, uncompressed or deflated, with or without shuffle);
//   - .pconn.nii: a CIFTI-2 parcellated connectivity file, whose parcel
//     names are the region labels;
//   - any other: delimited text (tab, comma or white space, with an
//     optional header row and first column of region labels).
type Modality struct {
	// Files is a path template holding "{participant_id}", for example
	// "fc/{participant_id}_fc.tsv".
	Files string `toml:"files"`
	// Stack is one file holding an n × p × p array (.npy, .npz or .mat),
	// set instead of Files.
	Stack string `toml:"stack"`
	// StackIDs is a text file naming the participant_id of each of the
	// stack's n matrices, one a line, in order. Required with Stack unless
	// IDsVariable is set.
	StackIDs string `toml:"stack_ids"`
	// Variable names the array to read in .npz and .mat files, which hold
	// named arrays; empty takes the file's only array (an .npz stack's
	// only array besides IDsVariable). Only for those formats.
	Variable string `toml:"variable"`
	// IDsVariable names, in an .npz stack, the 1-D array of participant
	// ids (strings or integers) in the stack's order, set instead of
	// StackIDs.
	IDsVariable string `toml:"ids_variable"`
	// Values is "correlation" (default for functional: every entry must lie
	// within [-1, 1]) or "any" (no range check). Structural matrices are
	// always checked non-negative and take no Values key.
	Values ValueRange `toml:"values"`
	// SymmetryTolerance is the largest |a_ij − a_ji| accepted (absolute);
	// default 1e-6. Zero demands exact symmetry.
	SymmetryTolerance *float64 `toml:"symmetry_tolerance"`

	// Series is a path template holding "{participant_id}" of each
	// participant's regional time series, set instead of Files or Stack
	// (functional only): a T × p array, a row per time point and a column
	// per region, as a .npy file or delimited text with a header row of
	// region names (a corner cell above an index or time column is
	// accepted). The participant's p × p matrix is estimated from it as
	// Estimator and Shrinkage say (see SeriesSettings). T may differ
	// between participants; the check reports its range.
	Series string `toml:"series"`
	// Estimator is the connectome estimated from the series: "correlation"
	// (default), "partial", "covariance" or "tangent" (see Estimator).
	// The functional preprocessing (Fisher z, diagonal) applies to
	// correlation and partial correlation; covariances and tangent
	// matrices are used as estimated.
	Estimator Estimator `toml:"estimator"`
	// Shrinkage is "none" (default: the sample covariance) or
	// "ledoit_wolf" (see Shrinkage).
	Shrinkage Shrinkage `toml:"shrinkage"`
	// TangentMean is the reference of estimator = "tangent": "geometric"
	// (default) or "log_euclidean" (see TangentMean).
	TangentMean TangentMean `toml:"tangent_mean"`
	// TangentDiagonal is "drop" (default) or "keep" (see TangentDiagonal).
	TangentDiagonal TangentDiagonal `toml:"tangent_diagonal"`
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

// BadParticipantPolicy is the value of the key cohort.on_bad_participant:
// BadParticipantError or BadParticipantExclude ("" is unset).
type BadParticipantPolicy string

// Settings of cohort.on_bad_participant.
const (
	BadParticipantError   BadParticipantPolicy = "error"
	BadParticipantExclude BadParticipantPolicy = "exclude"
)

// UnmarshalText sets b to the word text: "error", "exclude" or ""
// (unset). Another word is an error listing these.
func (b *BadParticipantPolicy) UnmarshalText(text []byte) error {
	return enum.Parse(b, text, BadParticipantError, BadParticipantExclude)
}

// MarshalText returns the word of b.
func (b BadParticipantPolicy) MarshalText() ([]byte, error) { return []byte(b), nil }

// String returns the word of b.
func (b BadParticipantPolicy) String() string { return string(b) }

// DiagonalTolerance is the largest |d − 1| accepted on the diagonal of a
// functional matrix of correlations (values = "correlation") whose
// diagonal preprocessing replaces (diagonal = "zero"): round-off such as
// the 1.0000002 of a correlation computed in single precision (float32's
// machine epsilon is 1.2e-7) is not an error there. Common practice, no
// source: the same 1e-6 as the default symmetry_tolerance.
const DiagonalTolerance = 1e-6

// Defaults of Source.
const (
	DefaultIDColumn        = "participant_id"
	DefaultMinParticipants = 10
	DefaultOutlierSD       = 3.0
)

// SetDefaults fills every unset field with its documented default.
// Validate expects it to have been called.
func (s *Source) SetDefaults() {
	if s.IDColumn == "" {
		s.IDColumn = DefaultIDColumn
	}
	if s.MinParticipants == nil {
		s.MinParticipants = new(DefaultMinParticipants)
	}
	if s.OutlierSD == nil {
		s.OutlierSD = new(DefaultOutlierSD)
	}
	if s.Unlisted == "" {
		s.Unlisted = UnlistedError
	}
	if s.OnBadParticipant == "" {
		s.OnBadParticipant = BadParticipantError
	}
	if s.Storage == "" {
		s.Storage = StorageFloat64
	}
	for _, m := range []*Modality{s.Functional, s.Structural} {
		if m != nil && m.SymmetryTolerance == nil {
			tol := DefaultSymmetryTolerance
			m.SymmetryTolerance = &tol
		}
	}
	if s.Functional != nil && s.Functional.Values == "" && s.Functional.Series == "" {
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
	if needTargets && len(s.Targets) == 0 && len(s.Labels) == 0 {
		return errors.New(`cohort: key "targets" needs at least one score column (or "labels" a class-label column)`)
	}
	if strings.TrimSpace(s.IDColumn) == "" {
		return errors.New(`cohort.id_column: empty column name`)
	}
	seen := map[string]string{}
	note := func(key, col string) error {
		if col == "" {
			return fmt.Errorf("cohort.%s: empty column name", key)
		}
		if col == s.IDColumn {
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
	for _, l := range s.Labels {
		if err := note("labels", l); err != nil {
			return err
		}
	}
	if err := s.validateClasses(); err != nil {
		return err
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
	if err := enum.Check(s.OnBadParticipant); err != nil {
		return fmt.Errorf("cohort.on_bad_participant: %w", err)
	}
	if err := enum.Check(s.Storage); err != nil {
		return fmt.Errorf("cohort.storage: %w", err)
	}
	for _, id := range slices.Sorted(maps.Keys(s.Exclude)) {
		if strings.TrimSpace(s.Exclude[id]) == "" {
			return fmt.Errorf("cohort.exclude: %q: give the reason for leaving the participant out (a non-empty text)", id)
		}
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

// validateClasses checks [cohort.classes]: every key a label of
// cohort.labels, every list of at least two distinct, non-empty names that
// are not a missing-value mark.
func (s Source) validateClasses() error {
	for _, name := range slices.Sorted(maps.Keys(s.Classes)) {
		key := "cohort.classes." + name
		if !slices.Contains(s.Labels, name) {
			return fmt.Errorf("%s: %q is not named in cohort.labels (labels: %s)", key, name, quoteAll(s.Labels))
		}
		classes := s.Classes[name]
		if len(classes) < 2 {
			return fmt.Errorf("%s: a label needs at least 2 classes, found %d", key, len(classes))
		}
		for i, c := range classes {
			if isMissing(strings.TrimSpace(c)) {
				return fmt.Errorf("%s: class %d is %q, which marks a missing value", key, i+1, c)
			}
			if c != strings.TrimSpace(c) {
				return fmt.Errorf("%s: class %d %q has surrounding white space, which table cells never keep", key, i+1, c)
			}
			if j := slices.Index(classes[:i], c); j >= 0 {
				return fmt.Errorf("%s: class %q is listed twice (%d and %d)", key, c, j+1, i+1)
			}
		}
	}
	return nil
}

func (m Modality) validate(key string) error {
	switch {
	case m.Series != "" || m.Estimator != "" || m.Shrinkage != "" || m.TangentMean != "" || m.TangentDiagonal != "":
		if err := m.validateSeries(key); err != nil {
			return err
		}
		if m.StackIDs != "" {
			return fmt.Errorf(`%s.stack_ids: goes with "stack", not "series"`, key)
		}
	case m.Files != "" && m.Stack != "":
		return fmt.Errorf(`%s: set either "files" or "stack", not both`, key)
	case m.Files == "" && m.Stack == "":
		return fmt.Errorf(`%s: set "files" (a path template) or "stack" (an n × p × p .npy, .npz or .mat file), or "series" (regional time series, functional only)`, key)
	case m.Files != "":
		if m.StackIDs != "" {
			return fmt.Errorf(`%s.stack_ids: goes with "stack", not "files"`, key)
		}
		if m.IDsVariable != "" {
			return fmt.Errorf(`%s.ids_variable: goes with an .npz "stack", not "files"`, key)
		}
		if err := checkTemplate(key+".files", m.Files); err != nil {
			return err
		}
		if f := formatOf(m.Files); f == formatPtseries {
			return fmt.Errorf("%s.files: %q is a CIFTI-2 time series (.ptseries.nii); matrix files hold p × p connectivity (.pconn.nii)", key, m.Files)
		}
		if m.Variable != "" && !hasVariables(formatOf(m.Files)) {
			return fmt.Errorf("%s.variable: names an array in .npz or .mat files, but %q is neither", key, m.Files)
		}
	case m.Stack != "":
		f := formatOf(m.Stack)
		if f != formatNPY && f != formatNPZ && f != formatMAT {
			return fmt.Errorf("%s.stack: %q must be a .npy, .npz or .mat file", key, m.Stack)
		}
		if m.Variable != "" && !hasVariables(f) {
			return fmt.Errorf("%s.variable: names an array in .npz or .mat files, but %q is neither", key, m.Stack)
		}
		switch {
		case m.IDsVariable != "" && f != formatNPZ:
			return fmt.Errorf("%s.ids_variable: names an id array in an .npz stack, but %q is not .npz; list the ids in stack_ids", key, m.Stack)
		case m.IDsVariable != "" && m.StackIDs != "":
			return fmt.Errorf(`%s: set either "stack_ids" (a file) or "ids_variable" (an array of the .npz), not both`, key)
		case m.IDsVariable == "" && m.StackIDs == "":
			return fmt.Errorf(`%s: "stack" needs "stack_ids", the file listing its participants in order (or, for an .npz, "ids_variable")`, key)
		}
	}
	if m.SymmetryTolerance == nil || !(*m.SymmetryTolerance >= 0) || math.IsInf(*m.SymmetryTolerance, 1) {
		return fmt.Errorf("%s.symmetry_tolerance: must be a finite number, zero or positive, found %s", key, optionalFloat(m.SymmetryTolerance))
	}
	return nil
}

// checkTemplate checks a path template of key: Placeholder exactly once
// and no other braces.
func checkTemplate(key, template string) error {
	if n := strings.Count(template, Placeholder); n != 1 {
		return fmt.Errorf("%s: template %q must hold %s exactly once, found %d", key, template, Placeholder, n)
	}
	if rest := strings.ReplaceAll(template, Placeholder, ""); strings.ContainsAny(rest, "{}") {
		return fmt.Errorf("%s: template %q: the only placeholder is %s", key, template, Placeholder)
	}
	return nil
}

// template returns the modality's per-participant path template: Files
// or Series.
func (m *Modality) template() string {
	if m.Series != "" {
		return m.Series
	}
	return m.Files
}

// templateKey names the key of template: "files" or "series".
func (m *Modality) templateKey() string {
	if m.Series != "" {
		return "series"
	}
	return "files"
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
