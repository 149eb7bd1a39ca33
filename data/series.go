package data

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data/connectivity"
)

// parseSeriesText parses delimited text of time series (ReadSeries): an
// optional header row of region names (no cell of it a number), then one
// row of numbers per time point. A first column is an index or time
// column, and is dropped, when the header is one cell shorter than the
// rows, when none of its cells is a number (time labels), or when it
// counts time points (0, 1, 2, … or 1, 2, 3, …); a header cell above it
// (a corner cell such as "Node" or "time") is not a region name. A cell
// that is not a number or not finite is an error naming its line and
// column.
func parseSeriesText(path string, raw []byte) (*mat.Dense, []string, error) {
	rows, lines := splitRows(raw)
	if len(rows) == 0 {
		return nil, nil, &FileError{Path: path, Err: errors.New("file is empty; expected a row of numbers per time point")}
	}
	var header []string
	headerLine := 0
	if isHeader(rows[0]) {
		header, headerLine, rows, lines = rows[0], lines[0], rows[1:], lines[1:]
		if len(rows) == 0 {
			return nil, nil, &FileError{Path: path, Line: headerLine, Err: errors.New("found a header row but no time points")}
		}
	}
	width := len(rows[0])
	for k, r := range rows {
		if len(r) != width {
			return nil, nil, &FileError{Path: path, Line: lines[k], Err: fmt.Errorf("found %d fields, expected %d as on line %d", len(r), width, lines[0])}
		}
	}
	col0 := 0
	if width > 1 && (header != nil && len(header) == width-1 || indexColumn(rows)) {
		col0 = 1
	}
	p := width - col0
	var names []string
	if header != nil {
		switch len(header) {
		case p:
			names = header
		case p + 1:
			names = header[1:] // a corner cell above the index column
		default:
			return nil, nil, &FileError{Path: path, Line: headerLine, Err: fmt.Errorf("header row has %d region names, expected %d for %d columns of numbers", len(header), p, p)}
		}
		for k := range names {
			names[k] = unquote(names[k])
		}
	}
	x := mat.NewDense(len(rows), p, nil)
	for t, r := range rows {
		for j, cell := range r[col0:] {
			v, err := strconv.ParseFloat(cell, 64)
			if err != nil {
				return nil, nil, fileErrorf(path, lines[t], col0+j+1, "value %q is not a number", cell)
			}
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, nil, fileErrorf(path, lines[t], col0+j+1, "value %q%s is not a finite number; time series must be complete", cell, regionOf(names, j))
			}
			x.Set(t, j, v)
		}
	}
	return x, names, nil
}

// indexColumn reports whether the first column of rows holds time labels
// (no cell a number) or counts the rows from 0 or 1.
func indexColumn(rows [][]string) bool {
	labels := true
	for _, r := range rows {
		if isNumber(r[0]) {
			labels = false
			break
		}
	}
	if labels {
		return true
	}
	if len(rows) < 2 {
		return false
	}
	first, err := strconv.ParseFloat(rows[0][0], 64)
	if err != nil || (first != 0 && first != 1) {
		return false
	}
	for t, r := range rows {
		v, err := strconv.ParseFloat(r[0], 64)
		if err != nil || v != first+float64(t) {
			return false
		}
	}
	return true
}

// regionOf returns ` (region "name")` for column j, or "" without names.
func regionOf(names []string, j int) string {
	if names == nil {
		return ""
	}
	return fmt.Sprintf(" (region %q)", names[j])
}

// seriesMatrix reads participant id's time series of modality m, checks
// them (region names against the cohort's, finite, no constant region,
// enough time points for the estimator) and returns the matrix the
// estimator makes of them with the number of time points T.
func (l *loader) seriesMatrix(m *modality, id string) (*matrixFile, error) {
	path := l.path(strings.ReplaceAll(m.spec.Series, Placeholder, id))
	raw, err := l.read(path, 8*maxTableBytes)
	if err != nil {
		return nil, err
	}
	x, names, err := decodeSeries(path, raw, m.spec.Variable)
	if err != nil {
		return nil, err
	}
	T, p := x.Dims()
	if names != nil {
		if x, names, err = l.agreeRegions(path, x, names); err != nil {
			return nil, err
		}
	}
	switch {
	case p < 2:
		return nil, &FileError{Path: path, Err: fmt.Errorf("series of %d region; expected at least 2 regions (a column per region)", p)}
	case l.p == 0:
		l.p, l.pSrc = p, path
	case p != l.p:
		return nil, &FileError{Path: path, Err: fmt.Errorf("series of %d regions, expected %d as in %s", p, l.p, l.pSrc)}
	}
	if names == nil {
		names = l.labels
	}
	for t := range T {
		for j := range p {
			if v := x.At(t, j); math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, &FileError{Path: path, Err: fmt.Errorf("time point %d%s, column %d: value %v is not a finite number; time series must be complete", t+1, regionOf(names, j), j+1, v)}
			}
		}
	}
	if T < 3 {
		return nil, &FileError{Path: path, Err: fmt.Errorf("%d time points; expected at least 3 rows, one per time point", T)}
	}
	for j := range p {
		constant := true
		for t := 1; t < T; t++ {
			if x.At(t, j) != x.At(0, j) {
				constant = false
				break
			}
		}
		if constant {
			return nil, &FileError{Path: path, Err: fmt.Errorf("column %d%s is constant (%v at all %d time points); a region without signal has no connectivity (was it outside the scan?)", j+1, regionOf(names, j), x.At(0, j), T)}
		}
	}
	set := m.spec.Settings()
	if set.Shrinkage == ShrinkageNone && T <= p && (set.Estimator == EstimatorPartial || set.Estimator == EstimatorTangent) {
		return nil, &FileError{Path: path, Err: fmt.Errorf("%d time points for %d regions: the sample covariance of T ≤ p time points is singular (rank at most T − 1 = %d), so estimator %q cannot be computed; set shrinkage = %q in [cohort.functional], or use fewer regions", T, p, T-1, set.Estimator, ShrinkageLedoitWolf)}
	}
	a, err := estimate(x, set)
	if err != nil {
		var v *connectivity.VarianceError
		if errors.As(err, &v) {
			err = fmt.Errorf("column %d%s has variance %g; a constant region has no correlation", v.Region+1, regionOf(names, v.Region), v.Variance)
		} else if errors.Is(err, connectivity.ErrNotPositiveDefinite) {
			err = fmt.Errorf("estimator %q: %w; some regions' series are linear combinations of others (set shrinkage = %q)", set.Estimator, err, ShrinkageLedoitWolf)
		}
		return nil, &FileError{Path: path, Err: err}
	}
	return &matrixFile{a: a, path: path, timePoints: T}, nil
}

// agreeRegions checks a series file's region names against the cohort's
// and returns x with its columns in the cohort's order. The first named
// file sets the cohort's regions when no regions file does. A name given
// twice, a region of the cohort that the file lacks and a region the
// cohort lacks are errors naming the regions.
func (l *loader) agreeRegions(path string, x *mat.Dense, names []string) (*mat.Dense, []string, error) {
	col := make(map[string]int, len(names))
	for j, n := range names {
		if prev, dup := col[n]; dup {
			return nil, nil, &FileError{Path: path, Line: 1, Err: fmt.Errorf("region %q names columns %d and %d", n, prev+1, j+1)}
		}
		col[n] = j
	}
	if l.labels == nil {
		l.labels, l.labelsSrc = names, "header of "+path
		return x, names, nil
	}
	var missing, extra []string
	for _, n := range l.labels {
		if _, ok := col[n]; !ok {
			missing = append(missing, strconv.Quote(n))
		}
	}
	known := make(map[string]bool, len(l.labels))
	for _, n := range l.labels {
		known[n] = true
	}
	for _, n := range names {
		if !known[n] {
			extra = append(extra, strconv.Quote(n))
		}
	}
	if len(missing) > 0 {
		msg := fmt.Sprintf("region %s of %s is missing", strings.Join(missing, ", "), l.labelsSrc)
		if len(missing) > 1 {
			msg = fmt.Sprintf("regions %s of %s are missing", strings.Join(missing, ", "), l.labelsSrc)
		}
		if len(extra) > 0 {
			msg += fmt.Sprintf("; the file has %s instead", strings.Join(extra, ", "))
		}
		return nil, nil, &FileError{Path: path, Line: 1, Err: errors.New(msg)}
	}
	if len(extra) > 0 {
		return nil, nil, &FileError{Path: path, Line: 1, Err: fmt.Errorf("%s not among the %d regions of %s", strings.Join(extra, ", "), len(l.labels), l.labelsSrc)}
	}
	T := x.RawMatrix().Rows
	out := mat.NewDense(T, len(l.labels), nil)
	for k, n := range l.labels {
		j := col[n]
		for t := range T {
			out.Set(t, k, x.At(t, j))
		}
	}
	return out, l.labels, nil
}

// estimate returns the p × p matrix set's estimator makes of the T × p
// series x: the correlation, partial correlation or covariance of the
// sample or Ledoit–Wolf covariance; for EstimatorTangent the covariance,
// which the fold's preparation embeds.
func estimate(x *mat.Dense, set *SeriesSettings) (*mat.Dense, error) {
	var cov *mat.SymDense
	if set.Shrinkage == ShrinkageLedoitWolf {
		cov, _ = connectivity.LedoitWolf(x)
	} else {
		cov = connectivity.Covariance(x)
	}
	var out *mat.SymDense
	var err error
	switch set.Estimator {
	case EstimatorCorrelation:
		out, err = connectivity.Correlation(cov)
	case EstimatorPartial:
		if _, err = connectivity.Correlation(cov); err == nil {
			out, err = connectivity.PartialCorrelation(cov)
		}
	case EstimatorTangent:
		var ch mat.Cholesky
		if !ch.Factorize(cov) {
			err = fmt.Errorf("covariance: %w", connectivity.ErrNotPositiveDefinite)
		}
		out = cov
	default:
		out = cov
	}
	if err != nil {
		return nil, err
	}
	return mat.DenseCopyOf(out), nil
}
