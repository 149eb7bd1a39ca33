package data

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"maps"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Load reads the cohort that src describes, checks every file, preprocesses
// each matrix with pre and returns the included participants in table
// order, with Cohort.Excluded listing the others and why. Relative paths
// in src are taken from baseDir, the folder of the experiment file. Unset
// fields of src and pre take their defaults (the caller's values are not
// changed). It is Check without the report.
func Load(src Source, pre Preprocess, baseDir string) (*Cohort, error) {
	c, _, err := Check(src, pre, baseDir)
	return c, err
}

// Check reads and checks the cohort that src describes, as Load does, and
// also returns a report of what it found (counts, exclusions, statistics,
// outlier flags, covariate codings).
//
// Fatal problems make Check return a nil cohort and report and an error
// listing every problem found (errors.Join of *FileError values, up to 25):
// a malformed or unreadable file, a missing column, a duplicated
// participant_id, a table cell that is not a number, a matrix that is not
// square, not of the cohort's p, not symmetric within symmetry_tolerance,
// not finite, out of range (functional, values = "correlation": outside
// [-1, 1]; structural: negative), and, unless unlisted = "report", a
// matrix file or stack entry whose participant has no table row.
//
// Other problems exclude one participant with a reason in
// Cohort.Excluded and the report: no matrix file (or no stack entry) for a
// modality, no value in any target column, no value in the group column.
// So do an id listed in src.Exclude (with its reason) and, when
// src.OnBadParticipant is BadParticipantExclude, a failed check of the
// participant's own matrix (with the check's message). A functional
// diagonal within DiagonalTolerance of 1 is accepted when preprocessing
// replaces the diagonal.
// A participant missing some but not all scores is kept with NaN there;
// with labels (src.Labels), a participant is excluded only when every
// score and every label is missing, and a missing label is class −1.
//
// Class labels are checked against the table: a value outside the
// label's declared classes (cohort.classes) is an error naming its row; a
// label with fewer than two classes among the included participants, or
// a declared class that none of them has, is an error naming the column.
//
// When fewer than src.MinParticipants are left Check returns the report
// and a *TooFewError.
//
// The statistics of the report and the outlier flags are computed on the
// matrices as read, before preprocessing.
func Check(src Source, pre Preprocess, baseDir string) (*Cohort, *Report, error) {
	return check(src, pre, baseDir, false)
}

// CheckUnscored is Check for participants whose scores are unknown, such
// as the ones a saved model is asked to predict: src.Targets is ignored,
// src.Labels and src.Classes are ignored too, the table needs no score or
// label columns, nobody is excluded for lacking scores, src.MinParticipants is ignored (one participant is a cohort),
// and matrix files of participants without a table row are passed over
// (unlisted = "report": the table lists who is to be predicted, such as a
// few new participants whose files lie among the cohort's). The cohort's
// Targets are empty and each Participant.Scores is nil.
func CheckUnscored(src Source, pre Preprocess, baseDir string) (*Cohort, *Report, error) {
	src = src.clone()
	src.Targets = nil
	src.Labels = nil
	src.Classes = nil
	src.MinParticipants = new(1)
	src.Unlisted = UnlistedReport
	return check(src, pre, baseDir, true)
}

func check(src Source, pre Preprocess, baseDir string, unscored bool) (*Cohort, *Report, error) {
	src = src.clone()
	src.SetDefaults()
	if err := src.validate(!unscored); err != nil {
		return nil, nil, err
	}
	pre.SetDefaults()
	if err := pre.Validate(); err != nil {
		return nil, nil, err
	}
	l := &loader{src: src, pre: pre, baseDir: baseDir}
	return l.load()
}

// clone copies s so that SetDefaults leaves the caller's modalities alone
// (SetDefaults only replaces pointers, never writes through them).
func (s Source) clone() Source {
	if s.Functional != nil {
		f := *s.Functional
		s.Functional = &f
	}
	if s.Structural != nil {
		st := *s.Structural
		s.Structural = &st
	}
	return s
}

// loader holds the state of one Check.
type loader struct {
	src     Source
	pre     Preprocess
	baseDir string
	errs    errorList

	tablePath string
	labels    []string // reference region labels; nil until known
	labelsSrc string   // where labels came from, for messages and the report
	p         int      // number of regions; 0 until known
	pSrc      string   // the file that set p
	files     []FileDigest
	store     *compactStore // with cohort.storage = "float32"; nil until the first participant
}

// compact moves p's checked and preprocessed matrices into the cohort's
// compact store (cohort.storage = "float32") and drops the float64 ones.
// rows bounds the number of participants still to come, this one
// included.
func (l *loader) compact(p *Participant, rows int) {
	var n int
	if p.Functional != nil {
		n, _ = p.Functional.Dims()
	} else if p.Structural != nil {
		n, _ = p.Structural.Dims()
	} else {
		return
	}
	if l.store == nil || l.store.size != PackedLen(n) {
		l.store = &compactStore{size: PackedLen(n)}
	}
	l.store.left = rows
	if p.Functional != nil && p.Structural != nil {
		l.store.left = 2 * rows
	}
	p.Compact = &Compact{P: n}
	if p.Functional != nil {
		p.Compact.Functional = l.store.next()
		Pack(p.Compact.Functional, p.Functional)
		p.Functional = nil
	}
	if p.Structural != nil {
		p.Compact.Structural = l.store.next()
		Pack(p.Compact.Structural, p.Structural)
		p.Structural = nil
	}
}

// read reads the regular file at path (readRegular) and records its
// digest for Cohort.Files.
func (l *loader) read(path string, limit int64) ([]byte, error) {
	raw, err := readRegular(path, limit)
	if err != nil {
		return nil, err
	}
	name := path
	if !filepath.IsAbs(path) || filepath.IsAbs(l.baseDir) {
		if rel, err := filepath.Rel(l.baseDir, path); err == nil && !strings.HasPrefix(rel, "..") {
			name = rel
		}
	}
	sum := sha256.Sum256(raw)
	l.files = append(l.files, FileDigest{Path: filepath.ToSlash(name), SHA256: hex.EncodeToString(sum[:])})
	return raw, nil
}

func (l *loader) path(p string) string {
	if filepath.IsAbs(p) {
		return p
	}
	return filepath.Join(l.baseDir, p)
}

// tableRow is one participant's row of the participants table, parsed.
type tableRow struct {
	id         string
	group      string
	site       string
	scores     []float64
	covariates []float64
	// labels holds the cell of each label column, "" where missing or
	// for a participant excluded by id.
	labels []string
}

// modality is one modality's files, located.
type modality struct {
	name      string // "functional" or "structural"
	spec      *Modality
	stackPath string
	idsPath   string
	stack     *array
	stackIdx  map[string]int // participant_id -> index in the stack
	report    *ModalityReport

	// Per included participant, in order: mean off-diagonal entry and
	// density of the matrix as read, and the number of time points of a
	// modality read from series.
	means, densities, timePoints []float64
}

func (l *loader) load() (*Cohort, *Report, error) {
	l.tablePath = l.path(l.src.Participants)
	tbl, err := readTable(l.tablePath, l.read)
	if err != nil {
		return nil, nil, err
	}
	rep := &Report{
		Participants: l.tablePath,
		Rows:         len(tbl.rows),
		OutlierSD:    *l.src.OutlierSD,
		Notice:       Notice,
		Excluded:     []Exclusion{},
		Outliers:     []Outlier{},
	}
	rows, covReports := l.parseRows(tbl)
	if err := l.errs.err(); err != nil {
		return nil, nil, err
	}
	inTable := make(map[string]bool, len(rows))
	for _, r := range rows {
		inTable[r.id] = true
	}
	for _, id := range slices.Sorted(maps.Keys(l.src.Exclude)) {
		if !inTable[id] {
			l.errs.add(fmt.Errorf("cohort.exclude: %s %q has no row in %s", l.src.IDColumn, id, l.tablePath))
		}
	}
	if err := l.errs.err(); err != nil {
		return nil, nil, err
	}

	if l.src.Regions != "" {
		lp := l.path(l.src.Regions)
		names, _, err := readIDList(lp, regionLabel, l.read)
		if err != nil {
			return nil, nil, fmt.Errorf("cohort.regions: %w", err)
		}
		l.labels, l.labelsSrc, l.p, l.pSrc = names, lp, len(names), lp+" (the region labels)"
	}

	var mods []*modality
	if l.src.Functional != nil {
		mods = append(mods, &modality{name: "functional", spec: l.src.Functional})
	}
	if l.src.Structural != nil {
		mods = append(mods, &modality{name: "structural", spec: l.src.Structural})
	}
	known := make(map[string]bool, len(rows))
	for _, r := range rows {
		known[r.id] = true
	}
	for _, m := range mods {
		l.locate(m, known, rep)
	}
	if err := l.errs.err(); err != nil {
		return nil, nil, err
	}

	c := &Cohort{Targets: l.src.Targets, Covariates: l.src.Covariates, SiteColumn: l.src.Site}
	var kept []*Participant
	var keptRows []tableRow
	for ri, r := range rows {
		if reason, ok := l.src.Exclude[r.id]; ok {
			c.Excluded = append(c.Excluded, Exclusion{ID: r.id, Reason: "excluded in the experiment file (cohort.exclude): " + reason})
			continue
		}
		var reasons []string
		for _, m := range mods {
			if reason := l.absent(m, r.id); reason != "" {
				reasons = append(reasons, reason)
			}
		}
		switch {
		case len(l.src.Labels) > 0 && allNaN(r.scores) && allEmpty(r.labels):
			reasons = append(reasons, fmt.Sprintf("no value in any target or label column (%s)", strings.Join(slices.Concat(l.src.Targets, l.src.Labels), ", ")))
		case len(l.src.Labels) == 0 && len(l.src.Targets) > 0 && allNaN(r.scores):
			reasons = append(reasons, fmt.Sprintf("no value in any target column (%s)", strings.Join(l.src.Targets, ", ")))
		}
		if l.src.Group != "" && r.group == "" {
			reasons = append(reasons, fmt.Sprintf("no value in group column %q", l.src.Group))
		}
		if len(reasons) > 0 {
			c.Excluded = append(c.Excluded, Exclusion{ID: r.id, Reason: strings.Join(reasons, "; ")})
			continue
		}
		p := &Participant{ID: r.id, Group: r.group, Site: r.site, Scores: r.scores, Covariates: r.covariates}
		var failed []string
		means, densities := make([]float64, len(mods)), make([]float64, len(mods))
		timePoints := make([]float64, len(mods))
		for k, m := range mods {
			f, err := l.matrix(m, r.id)
			if err == nil && m.spec.Series == "" {
				err = l.checkMatrix(m, f)
			}
			if err == nil {
				a := f.a
				means[k], densities[k] = offDiagonal(a)
				timePoints[k] = float64(f.timePoints)
				if m.name == "functional" {
					if set := m.spec.Settings(); set == nil || set.Estimator == EstimatorCorrelation || set.Estimator == EstimatorPartial {
						err = l.pre.Functional(a)
					}
					p.Functional = a
				} else {
					err = l.pre.Structural(a)
					p.Structural = a
				}
				if err != nil {
					err = fmt.Errorf("%s: participant %s: preprocessing the %s matrix: %w", f.path, r.id, m.name, err)
				} else {
					err = checkPreprocessed(m.name, f)
				}
			}
			if err != nil {
				if l.src.OnBadParticipant != BadParticipantExclude {
					l.errs.add(err)
				}
				failed = append(failed, err.Error())
			}
		}
		if len(failed) > 0 {
			c.Excluded = append(c.Excluded, Exclusion{ID: r.id, Reason: fmt.Sprintf("failed a check (cohort.on_bad_participant = %q): %s", BadParticipantExclude, strings.Join(failed, "; "))})
			continue
		}
		if l.src.Storage == StorageFloat32 {
			l.compact(p, len(rows)-ri)
		}
		for k, m := range mods {
			m.means = append(m.means, means[k])
			m.densities = append(m.densities, densities[k])
			if m.spec.Series != "" {
				m.timePoints = append(m.timePoints, timePoints[k])
			}
		}
		kept = append(kept, p)
		keptRows = append(keptRows, r)
	}
	if err := l.errs.err(); err != nil {
		return nil, nil, err
	}
	c.Participants = kept
	if len(l.src.Labels) > 0 {
		if err := l.codeLabels(tbl, c, keptRows); err != nil {
			return nil, nil, err
		}
	}
	c.Files = l.files
	if l.src.Functional != nil {
		c.Series = l.src.Functional.Settings()
	}
	c.Regions = l.labels
	if c.Regions == nil {
		c.Regions = DefaultRegions(l.p)
		l.labelsSrc = "default"
	}
	if c.Excluded == nil {
		c.Excluded = []Exclusion{}
	}

	l.describe(rep, c, mods, covReports)
	rep.Labels = describeLabels(c)
	rep.Cautions = LabelCautions(c)
	if len(kept) < *l.src.MinParticipants {
		return nil, rep, &TooFewError{Included: len(kept), Min: *l.src.MinParticipants, Excluded: len(c.Excluded)}
	}
	return c, rep, nil
}

// describe fills the report's counts and statistics from the cohort.
func (l *loader) describe(rep *Report, c *Cohort, mods []*modality, covReports []VariableReport) {
	kept := c.Participants
	rep.Included = len(kept)
	rep.Excluded = c.Excluded
	rep.Regions = l.p
	rep.RegionLabels = l.labelsSrc
	for _, p := range kept {
		rep.IncludedIDs = append(rep.IncludedIDs, p.ID)
	}
	for _, m := range mods {
		m.report.MeanConnectivity = describe(m.means)
		m.report.ParticipantMeans = m.means
		if set := m.spec.Settings(); set != nil {
			t := describe(m.timePoints)
			m.report.Series = set
			m.report.TimePoints = &t
			m.report.ParticipantTimePoints = m.timePoints
		}
		if m.name == "functional" {
			rep.Functional = m.report
			rep.Outliers = append(rep.Outliers, outliers(kept, m.means, "functional mean connectivity", *l.src.OutlierSD)...)
			continue
		}
		d := describe(m.densities)
		m.report.Density = &d
		m.report.ParticipantDensities = m.densities
		rep.Structural = m.report
		rep.Outliers = append(rep.Outliers, outliers(kept, m.densities, "structural density", *l.src.OutlierSD)...)
	}
	rep.Scores = make([]VariableReport, len(l.src.Targets))
	for k, name := range l.src.Targets {
		col := make([]float64, len(kept))
		for i, p := range kept {
			col[i] = p.Scores[k]
		}
		rep.Scores[k] = VariableReport{Name: name, Kind: "numeric", Stat: describe(col)}
	}
	for _, p := range kept {
		if !allNaN(p.Scores) && anyNaN(p.Scores) {
			rep.PartialScores++
		}
	}
	for k := range covReports {
		col := make([]float64, len(kept))
		for i, p := range kept {
			col[i] = p.Covariates[k]
		}
		covReports[k].Stat = describe(col)
	}
	rep.Covariates = covReports
	if l.src.Group != "" {
		rep.Group = describeGroups(l.src.Group, kept)
	}
}

// parseRows parses the participants table's ids, scores, covariates and
// groups, noting every problem in l.errs.
func (l *loader) parseRows(tbl *table) ([]tableRow, []VariableReport) {
	find := func(key, name string) int {
		i := tbl.column(name)
		if i < 0 {
			l.errs.add(&FileError{Path: tbl.path, Line: 1, Err: fmt.Errorf("no column %q (named in cohort.%s); the header has %s", name, key, quoteAll(tbl.header))})
		}
		return i
	}
	idName := l.src.IDColumn
	idKey := "participants"
	if idName != DefaultIDColumn {
		idKey = "id_column"
	}
	idCol := find(idKey, idName)
	targetCols := make([]int, len(l.src.Targets))
	for k, t := range l.src.Targets {
		targetCols[k] = find("targets", t)
	}
	labelCols := make([]int, len(l.src.Labels))
	for k, name := range l.src.Labels {
		labelCols[k] = find("labels", name)
	}
	covCols := make([]int, len(l.src.Covariates))
	for k, c := range l.src.Covariates {
		covCols[k] = find("covariates", c)
	}
	groupCol := -1
	if l.src.Group != "" {
		groupCol = find("group", l.src.Group)
	}
	siteCol := -1
	if l.src.Site != "" {
		siteCol = find("site", l.src.Site)
	}
	if l.errs.err() != nil {
		return nil, nil
	}
	if len(tbl.rows) == 0 {
		l.errs.add(&FileError{Path: tbl.path, Err: errors.New("table has a header but no participant rows")})
		return nil, nil
	}
	cellErr := func(r, col int, format string, args ...any) {
		l.errs.add(&FileError{Path: tbl.path, Line: tbl.lines[r], Column: col + 1, ColumnName: tbl.header[col], Err: fmt.Errorf(format, args...)})
	}

	rows := make([]tableRow, len(tbl.rows))
	seen := make(map[string]int)
	for r, cells := range tbl.rows {
		id := cells[idCol]
		switch {
		case isMissing(id):
			cellErr(r, idCol, "%s is empty", idName)
		case strings.ContainsAny(id, `/\`) || id == "." || id == "..":
			cellErr(r, idCol, "%s %q cannot name a file: it holds a path separator or is a dot name", idName, id)
		default:
			if prev, dup := seen[id]; dup {
				cellErr(r, idCol, "%s %q is already on line %d", idName, id, prev)
			}
			seen[id] = tbl.lines[r]
		}
		row := tableRow{id: id, scores: make([]float64, len(targetCols)), covariates: make([]float64, len(covCols))}
		_, excluded := l.src.Exclude[id]
		for k, col := range targetCols {
			row.scores[k] = math.NaN()
			cell := cells[col]
			if isMissing(cell) || excluded {
				continue
			}
			v, err := strconv.ParseFloat(cell, 64)
			switch {
			case err != nil:
				cellErr(r, col, "value %q is not a number (a missing score is an empty cell or n/a)", cell)
			case math.IsInf(v, 0) || math.IsNaN(v):
				cellErr(r, col, "value %q is not a finite number (a missing score is an empty cell or n/a)", cell)
			default:
				row.scores[k] = v
			}
		}
		row.labels = make([]string, len(labelCols))
		for k, col := range labelCols {
			cell := cells[col]
			if isMissing(cell) || excluded {
				continue
			}
			if declared := l.src.Classes[l.src.Labels[k]]; declared != nil && !slices.Contains(declared, cell) {
				cellErr(r, col, "value %q is not a class of label %q (cohort.classes.%s: %s; a missing label is an empty cell or n/a)", cell, l.src.Labels[k], l.src.Labels[k], quoteAll(declared))
				continue
			}
			row.labels[k] = cell
		}
		if groupCol >= 0 && !isMissing(cells[groupCol]) {
			row.group = cells[groupCol]
		}
		if siteCol >= 0 {
			if isMissing(cells[siteCol]) {
				cellErr(r, siteCol, "participant %s has no site (cohort.site names this column; every participant needs one)", id)
			} else {
				row.site = cells[siteCol]
			}
		}
		rows[r] = row
	}

	covReports := make([]VariableReport, len(covCols))
	for k, col := range covCols {
		covReports[k] = l.codeCovariate(tbl, col, k, rows, cellErr)
	}
	return rows, covReports
}

// codeCovariate fills covariate k of every row from column col: numbers as
// they are, or, when every non-missing cell is text, the index of the
// cell's value among the column's sorted distinct values.
func (l *loader) codeCovariate(tbl *table, col, k int, rows []tableRow, cellErr func(r, col int, format string, args ...any)) VariableReport {
	rep := VariableReport{Name: tbl.header[col], Kind: "numeric"}
	skip := func(r int) bool { _, ok := l.src.Exclude[rows[r].id]; return ok }
	first := -1 // first non-missing row of a participant not excluded by id
	for r, cells := range tbl.rows {
		if !isMissing(cells[col]) && !skip(r) {
			first = r
			break
		}
	}
	text := first >= 0 && !isNumber(tbl.rows[first][col])
	levels := map[string]bool{}
	for r, cells := range tbl.rows {
		rows[r].covariates[k] = math.NaN()
		cell := cells[col]
		if isMissing(cell) || skip(r) {
			continue
		}
		v, err := strconv.ParseFloat(cell, 64)
		switch {
		case text && err == nil:
			cellErr(r, col, "value %q is a number, but this covariate is text from line %d on (%q); write all its values as text or all as numbers", cell, tbl.lines[first], tbl.rows[first][col])
		case text:
			levels[cell] = true
		case err != nil:
			cellErr(r, col, "value %q is not a number, but this covariate is numeric from line %d on (%q); write all its values as numbers or all as text", cell, tbl.lines[first], tbl.rows[first][col])
		case math.IsInf(v, 0) || math.IsNaN(v):
			cellErr(r, col, "value %q is not a finite number (a missing value is an empty cell or n/a)", cell)
		default:
			rows[r].covariates[k] = v
		}
	}
	if !text {
		return rep
	}
	rep.Kind = "text"
	for lv := range levels {
		rep.Levels = append(rep.Levels, lv)
	}
	sort.Strings(rep.Levels)
	code := make(map[string]float64, len(rep.Levels))
	for i, lv := range rep.Levels {
		code[lv] = float64(i)
	}
	for r, cells := range tbl.rows {
		if c, ok := code[cells[col]]; ok {
			rows[r].covariates[k] = c
		}
	}
	return rep
}

// locate finds a modality's files: for a stack it reads the stack and its
// id list; for a template it scans for files with no table row.
func (l *loader) locate(m *modality, known map[string]bool, rep *Report) {
	key := "cohort." + m.name
	unlisted := func(id, file string, err error) {
		if l.src.Unlisted == UnlistedReport {
			rep.Unlisted = append(rep.Unlisted, Unlisted{ID: id, Modality: m.name, File: file})
			return
		}
		l.errs.add(err)
	}
	if m.spec.Stack != "" {
		m.report = &ModalityReport{Source: m.spec.Stack}
		m.stackPath = l.path(m.spec.Stack)
		raw, err := l.read(m.stackPath, 8*maxTableBytes)
		if err != nil {
			l.errs.add(fmt.Errorf("%s.stack: %w", key, err))
			return
		}
		arr, err := decodeArray(m.stackPath, raw, m.options(key))
		if err != nil {
			l.errs.add(fmt.Errorf("%s.stack: %w", key, err))
			return
		}
		if err := arr.checkStack(m.stackPath); err != nil {
			l.errs.add(err)
			return
		}
		ids, lines := arr.ids, []int(nil)
		m.idsPath = fmt.Sprintf("%s (array %q)", m.stackPath, m.spec.IDsVariable)
		if m.spec.IDsVariable == "" {
			m.idsPath = l.path(m.spec.StackIDs)
			ids, lines, err = readIDList(m.idsPath, l.src.IDColumn, l.read)
			if err != nil {
				l.errs.add(fmt.Errorf("%s.stack_ids: %w", key, err))
				return
			}
		} else if err := checkIDs(m.idsPath, ids, l.src.IDColumn); err != nil {
			l.errs.add(fmt.Errorf("%s.ids_variable: %w", key, err))
			return
		}
		if arr.shape[0] != len(ids) {
			hint := ""
			if arr.shape[2] == len(ids) && arr.shape[0] == arr.shape[1] {
				hint = "; a MATLAB p × p × n array puts the participants last: save permute(x, [3 1 2]) instead"
			}
			l.errs.add(&FileError{Path: m.stackPath, Err: fmt.Errorf("stack holds %d matrices (shape %v) but %s lists %d participants%s", arr.shape[0], arr.shape, m.idsPath, len(ids), hint)})
			return
		}
		if arr.shape[1] != arr.shape[2] {
			l.errs.add(&FileError{Path: m.stackPath, Err: fmt.Errorf("stack of shape %v holds %d × %d matrices; expected square p × p", arr.shape, arr.shape[1], arr.shape[2])})
			return
		}
		m.stack = arr
		m.stackIdx = make(map[string]int, len(ids))
		for k, id := range ids {
			m.stackIdx[id] = k
			if !known[id] {
				line := 0
				if lines != nil {
					line = lines[k]
				}
				unlisted(id, m.idsPath, fileErrorf(m.idsPath, line, 0, "%s %q has a matrix in %s but no row in %s (set cohort.unlisted = %q to go on without it)", l.src.IDColumn, id, m.stackPath, l.tablePath, UnlistedReport))
			}
		}
		return
	}
	m.report = &ModalityReport{Source: m.spec.template()}
	pattern := l.path(m.spec.template())
	at := strings.Index(pattern, Placeholder)
	prefix, suffix := pattern[:at], pattern[at+len(Placeholder):]
	matches, err := filepath.Glob(escapeGlob(prefix) + "*" + escapeGlob(suffix))
	if err != nil {
		l.errs.add(fmt.Errorf("%s.files: %w", key, err))
		return
	}
	for _, f := range matches {
		if len(f) <= len(prefix)+len(suffix) || !strings.HasPrefix(f, prefix) || !strings.HasSuffix(f, suffix) {
			continue
		}
		id := f[len(prefix) : len(f)-len(suffix)]
		if strings.ContainsAny(id, `/\`) || known[id] {
			continue
		}
		unlisted(id, f, &FileError{Path: f, Err: fmt.Errorf("file matches %s %q but %s %q has no row in %s (set cohort.unlisted = %q to go on without it)", key+"."+m.spec.templateKey(), m.spec.template(), l.src.IDColumn, id, l.tablePath, UnlistedReport)})
	}
}

// absent returns why participant id has no matrix of modality m, or "".
func (l *loader) absent(m *modality, id string) string {
	if m.stack != nil {
		if _, ok := m.stackIdx[id]; !ok {
			return fmt.Sprintf("not listed in the %s stack_ids %s", m.name, m.idsPath)
		}
		return ""
	}
	f := l.path(strings.ReplaceAll(m.spec.template(), Placeholder, id))
	if _, err := os.Lstat(f); err != nil {
		return fmt.Sprintf("no %s file %s", m.name, f)
	}
	return "" // a link that leads nowhere is an error of matrix, not an absence
}

// matrixFile is one participant's matrix of one modality with where it
// came from, so that a check can name the place.
type matrixFile struct {
	a     *mat.Dense
	path  string
	where func(i, j int) (line, column int) // nil when entries have no line (.npy)
	entry string                            // for a stack, which participant's matrix
	// timePoints is T of the series a matrix was estimated from; 0 for a
	// matrix read as one.
	timePoints int
}

// matrix reads participant id's matrix of modality m.
func (l *loader) matrix(m *modality, id string) (*matrixFile, error) {
	if m.stack != nil {
		k := m.stackIdx[id]
		return &matrixFile{a: m.stack.stack(k), path: m.stackPath, entry: fmt.Sprintf("participant %s (matrix %d of the stack)", id, k+1)}, nil
	}
	if m.spec.Series != "" {
		return l.seriesMatrix(m, id)
	}
	path := l.path(strings.ReplaceAll(m.spec.Files, Placeholder, id))
	raw, err := l.read(path, matrixLimit(l.p, formatOf(path) != formatText))
	if err != nil {
		return nil, err
	}
	arr, err := decodeArray(path, raw, m.options("cohort."+m.name))
	if err != nil {
		return nil, err
	}
	a, err := arr.matrix(path)
	if err != nil {
		return nil, err
	}
	if arr.names != nil {
		if err := l.agreeLabels(path, arr.names); err != nil {
			return nil, err
		}
	}
	return &matrixFile{a: a, path: path, where: arr.where}, nil
}

// options are the read options of modality m's files; key is the
// modality's table ("cohort.functional").
func (m *modality) options(key string) readOptions {
	return readOptions{variable: m.spec.Variable, idsVariable: m.spec.IDsVariable, key: key + ".variable"}
}

// checkIDs checks the participant ids read from a stack's id array: none
// empty, none naming a file path, no two alike.
func checkIDs(where string, ids []string, what string) error {
	seen := make(map[string]int, len(ids))
	for k, id := range ids {
		switch {
		case strings.TrimSpace(id) == "":
			return &FileError{Path: where, Err: fmt.Errorf("entry %d: %s is empty", k+1, what)}
		case strings.ContainsAny(id, `/\`) || id == "." || id == "..":
			return &FileError{Path: where, Err: fmt.Errorf("entry %d: %s %q cannot name a file: it holds a path separator or is a dot name", k+1, what, id)}
		}
		if prev, dup := seen[id]; dup {
			return &FileError{Path: where, Err: fmt.Errorf("entry %d: %s %q is already entry %d", k+1, what, id, prev+1)}
		}
		seen[id] = k
	}
	return nil
}

// errorAt returns a FileError at entry (i, j) of f (0-based; i = -1 for
// the whole matrix), with its line and column in a text file.
func (f *matrixFile) errorAt(i, j int, format string, args ...any) error {
	e := &FileError{Path: f.path, Err: fmt.Errorf(format, args...)}
	if f.where != nil && i >= 0 {
		e.Line, e.Column = f.where(i, j)
	}
	if f.entry != "" {
		e.Err = fmt.Errorf("%s: %w", f.entry, e.Err)
	}
	return e
}

// checkPreprocessed makes sure preprocessing left every entry of f finite
// and of a magnitude of at most MaxMagnitude: a transform or a scaling
// can overflow (a total of huge counts is +Inf, and x/Inf is 0 or NaN).
// The error names the file, the entry as read and the step's key.
func checkPreprocessed(modality string, f *matrixFile) error {
	r, c := f.a.Dims()
	for i := range r {
		for j := range c {
			if v := f.a.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v) > MaxMagnitude {
				return f.errorAt(i, j, "entry (%d, %d) is %v after preprocessing (see [preprocess.%s]); expected a finite number of magnitude at most %g",
					i+1, j+1, v, modality, MaxMagnitude)
			}
		}
	}
	return nil
}

// agreeLabels checks a matrix's header labels against the cohort's.
func (l *loader) agreeLabels(path string, labels []string) error {
	if l.labels == nil {
		l.labels, l.labelsSrc = labels, "header of "+path
		return nil
	}
	if len(labels) != len(l.labels) {
		return &FileError{Path: path, Err: fmt.Errorf("header has %d region labels, but %s has %d", len(labels), l.labelsSrc, len(l.labels))}
	}
	for k := range labels {
		if labels[k] != l.labels[k] {
			return &FileError{Path: path, Err: fmt.Errorf("region label %d is %q, but %s has %q", k+1, labels[k], l.labelsSrc, l.labels[k])}
		}
	}
	return nil
}

// checkMatrix checks one participant's matrix: square, p × p like the
// rest of the cohort, finite, symmetric within tolerance and in range.
// Problems at an entry (i, j) name its line and column in a text file;
// problems of the whole matrix (i = -1) name none.
func (l *loader) checkMatrix(m *modality, f *matrixFile) error {
	a, path := f.a, f.path
	at := f.errorAt
	r, c := a.Dims()
	if r != c {
		hint := ""
		if f.where != nil && (r == c+1 || c == r+1) {
			hint = " (labels that are numbers are read as values: a header row or label column must not be numbers)"
		}
		return at(-1, -1, "matrix is %d × %d; expected a square p × p matrix%s", r, c, hint)
	}
	if r < 2 {
		return at(-1, -1, "matrix is %d × %d; expected at least 2 regions", r, c)
	}
	if l.p == 0 {
		l.p, l.pSrc = r, path
	} else if r != l.p {
		return at(-1, -1, "matrix is %d × %d, expected %d × %d as in %s", r, c, l.p, l.p, l.pSrc)
	}
	if l.labels != nil && len(l.labels) != r {
		return at(-1, -1, "matrix is %d × %d, but %s has %d region labels", r, c, l.labelsSrc, len(l.labels))
	}
	for i := range r {
		for j := range c {
			if v := a.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) {
				return at(i, j, "entry (%d, %d) is %v; expected a finite number", i+1, j+1, v)
			} else if math.Abs(v) > MaxMagnitude {
				return at(i, j, "entry (%d, %d) is %v; expected a magnitude of at most %g, beyond which sums of squares overflow", i+1, j+1, v, MaxMagnitude)
			}
		}
	}
	worst, wi, wj := 0.0, 0, 0
	for i := range r {
		for j := i + 1; j < c; j++ {
			if d := math.Abs(a.At(i, j) - a.At(j, i)); d > worst {
				worst, wi, wj = d, i, j
			}
		}
	}
	if tol := *m.spec.SymmetryTolerance; worst > tol {
		return at(wi, wj, "not symmetric: entry (%d, %d) is %v but entry (%d, %d) is %v; the difference %.3g exceeds symmetry_tolerance %g (the worst pair)",
			wi+1, wj+1, a.At(wi, wj), wj+1, wi+1, a.At(wj, wi), worst, tol)
	}
	for i := range r {
		for j := range c {
			v := a.At(i, j)
			switch {
			case m.name == "structural" && v < 0:
				return at(i, j, "entry (%d, %d) is %v; structural values must be non-negative", i+1, j+1, v)
			case m.name == "functional" && m.spec.Values == ValuesCorrelation && (v < -1 || v > 1):
				if i == j && l.pre.FC.Diagonal == ZeroDiagonalSetting && math.Abs(v-1) <= DiagonalTolerance {
					continue // round-off on a diagonal that preprocessing replaces
				}
				return at(i, j, "entry (%d, %d) is %v, outside [-1, 1]; correlations expected (set cohort.functional.values = %q for other values)", i+1, j+1, v, ValuesAny)
			}
		}
	}
	return nil
}

// DefaultRegions returns the labels "R001", "R002", ... for p regions,
// with at least three digits.
func DefaultRegions(p int) []string {
	width := max(3, len(strconv.Itoa(p)))
	labels := make([]string, p)
	for i := range labels {
		labels[i] = fmt.Sprintf("R%0*d", width, i+1)
	}
	return labels
}

// escapeGlob escapes the characters filepath.Match treats as special.
func escapeGlob(s string) string {
	var b strings.Builder
	for _, r := range s {
		if strings.ContainsRune(`*?[\`, r) {
			b.WriteByte('\\')
		}
		b.WriteRune(r)
	}
	return b.String()
}

func quoteAll(names []string) string {
	q := make([]string, len(names))
	for i, n := range names {
		q[i] = strconv.Quote(n)
	}
	return strings.Join(q, ", ")
}

func allEmpty(xs []string) bool {
	for _, x := range xs {
		if x != "" {
			return false
		}
	}
	return true
}

func allNaN(xs []float64) bool {
	for _, x := range xs {
		if !math.IsNaN(x) {
			return false
		}
	}
	return true
}

func anyNaN(xs []float64) bool {
	for _, x := range xs {
		if math.IsNaN(x) {
			return true
		}
	}
	return false
}
