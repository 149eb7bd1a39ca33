package eval

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// A Prediction is one row of predictions.csv: the score a model predicted
// for one participant when that participant was in the test fold (see
// model.Prediction; Predicted is NaN when the model gave no prediction).
type Prediction = model.Prediction

// The columns of predictions.csv, in the order WritePredictions writes them.
const (
	ColumnParticipant = "participant_id"
	ColumnModel       = "model"
	ColumnTarget      = "target"
	ColumnRepeat      = "repeat"
	ColumnFold        = "fold"
	ColumnObserved    = "observed"
	ColumnPredicted   = "predicted"
)

func predictionColumns() []string {
	return []string{ColumnParticipant, ColumnModel, ColumnTarget, ColumnRepeat, ColumnFold, ColumnObserved, ColumnPredicted}
}

// A Header is the first row of a predictions file, the column names in file
// order.
type Header []string

// Has reports whether the file has the named column.
func (h Header) Has(column string) bool {
	for _, c := range h {
		if c == column {
			return true
		}
	}
	return false
}

// HasFolds reports whether the file has a fold column, so that per-fold
// figures can be computed. Without a repeat column every fold belongs to
// the first repeat.
func (h Header) HasFolds() bool { return h.Has(ColumnFold) }

// Extra returns the columns ReadPredictions does not read, in file order.
func (h Header) Extra() []string {
	var extra []string
	for _, c := range h {
		if !contains(predictionColumns(), c) {
			extra = append(extra, c)
		}
	}
	return extra
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// ReadPredictions reads a predictions file: comma-separated values with a
// header row, as WritePredictions writes and as other tools can make, or
// tab-separated values when name ends in .tsv (any case) or, for another
// name, when the header row holds a tab and no comma. The
// columns are found by name, in any order. observed and predicted are
// required; participant_id, model and target are empty strings when absent
// and repeat and fold are 0 when absent (Header.HasFolds tells which).
// Other columns are not read; Header.Extra lists them.
//
// When the file has a participant_id column, a participant (a non-empty
// id) may appear only once for each model, target and repeat: in
// cross-validation every participant is tested once per repeat, and a
// second row would count twice in the pooled figures. A repeated
// participant is a *data.FileError naming both lines.
//
// observed and predicted cells are numbers as strconv.ParseFloat reads them;
// an empty cell, "NaN" or "NA" (any case) is a missing value, read as NaN
// and later skipped and counted by the metrics. Infinite values are
// errors. repeat and fold cells are integers ≥ 1: files number repeats
// and folds from 1, as run folders, logs and messages do, and the rows
// read hold them from 0 (see model.Prediction). Every bad cell is a
// *data.FileError naming name, the line and the column; a malformed row is a
// *data.FileError wrapping the *csv.ParseError.
func ReadPredictions(r io.Reader, name string) ([]Prediction, Header, error) {
	br := bufio.NewReader(r)
	cr := csv.NewReader(br)
	cr.ReuseRecord = false
	if tabSeparated(br, name) {
		cr.Comma = '\t'
	}
	header, err := cr.Read()
	if err == io.EOF {
		return nil, nil, &data.FileError{Path: name, Line: 1, Err: errors.New("empty file: expected a header row naming the columns observed and predicted")}
	}
	if err != nil {
		return nil, nil, csvError(name, err)
	}
	if len(header) > 0 {
		header[0] = strings.TrimPrefix(header[0], "\uFEFF") // byte-order mark of some spreadsheets
	}
	index := make(map[string]int)
	for i, c := range header {
		if c == "" {
			return nil, nil, &data.FileError{Path: name, Line: 1, Column: i + 1, Err: errors.New("empty column name in header")}
		}
		if j, dup := index[c]; dup {
			return nil, nil, &data.FileError{Path: name, Line: 1, Column: i + 1, ColumnName: c, Err: fmt.Errorf("column %q appears twice (columns %d and %d)", c, j+1, i+1)}
		}
		index[c] = i
	}
	for _, c := range []string{ColumnObserved, ColumnPredicted} {
		if _, ok := index[c]; !ok {
			return nil, nil, &data.FileError{Path: name, Line: 1, Err: fmt.Errorf("no %q column: the header has %s", c, strings.Join(quoteAll(header), ", "))}
		}
	}

	type testKey struct {
		participant, model, target string
		repeat                     int
	}
	_, checkRepeats := index[ColumnParticipant]
	firstLine := make(map[testKey]int)

	var rows []Prediction
	for {
		record, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, nil, csvError(name, err)
		}
		line, _ := cr.FieldPos(0)
		cell := func(column string) (string, int, bool) {
			i, ok := index[column]
			if !ok {
				return "", 0, false
			}
			return record[i], i, true
		}
		bad := func(col int, column string, err error) error {
			return &data.FileError{Path: name, Line: line, Column: col + 1, ColumnName: column, Err: err}
		}
		var p Prediction
		for _, f := range []struct {
			column string
			dst    *string
		}{{ColumnParticipant, &p.ParticipantID}, {ColumnModel, &p.Model}, {ColumnTarget, &p.Target}} {
			if s, _, ok := cell(f.column); ok {
				*f.dst = s
			}
		}
		for _, f := range []struct {
			column string
			dst    *int
		}{{ColumnRepeat, &p.Repeat}, {ColumnFold, &p.Fold}} {
			s, col, ok := cell(f.column)
			if !ok {
				continue
			}
			v, err := strconv.Atoi(strings.TrimSpace(s))
			if err != nil || v < 1 {
				return nil, nil, bad(col, f.column, fmt.Errorf("expected an integer ≥ 1 (repeats and folds are numbered from 1), found %q", s))
			}
			*f.dst = v - 1
		}
		for _, f := range []struct {
			column string
			dst    *float64
		}{{ColumnObserved, &p.Observed}, {ColumnPredicted, &p.Predicted}} {
			s, col, _ := cell(f.column)
			v, err := parseValue(s)
			if err != nil {
				return nil, nil, bad(col, f.column, err)
			}
			*f.dst = v
		}
		if checkRepeats && p.ParticipantID != "" {
			k := testKey{p.ParticipantID, p.Model, p.Target, p.Repeat}
			if first, dup := firstLine[k]; dup {
				col := index[ColumnParticipant]
				return nil, nil, bad(col, ColumnParticipant, fmt.Errorf(
					"participant %q already has a prediction of model %q, target %q, repeat %d on line %d: expected one per repeat",
					p.ParticipantID, p.Model, p.Target, p.Repeat+1, first))
			}
			firstLine[k] = line
		}
		rows = append(rows, p)
	}
	return rows, Header(header), nil
}

// parseValue reads an observed or predicted cell.
func parseValue(s string) (float64, error) {
	t := strings.TrimSpace(s)
	switch strings.ToLower(t) {
	case "", "nan", "na":
		return math.NaN(), nil
	}
	v, err := strconv.ParseFloat(t, 64)
	if err != nil {
		return 0, fmt.Errorf("expected a number (or empty, NaN or NA for a missing value), found %q", s)
	}
	if math.IsInf(v, 0) {
		return 0, fmt.Errorf("expected a finite number, found %q", s)
	}
	return v, nil
}

// readHeader reads the header row of the CSV file name from cr and returns
// each column's index by name. An empty file, or a header without one of
// the columns need, is an error naming the file and line 1.
func readHeader(cr *csv.Reader, name string, need []string) (map[string]int, error) {
	header, err := cr.Read()
	if err == io.EOF {
		return nil, &data.FileError{Path: name, Line: 1, Err: errors.New("empty file: expected a header row")}
	}
	if err != nil {
		return nil, csvError(name, err)
	}
	col := make(map[string]int, len(header))
	for c, h := range header {
		col[h] = c
	}
	for _, n := range need {
		if _, ok := col[n]; !ok {
			return nil, &data.FileError{Path: name, Line: 1, Err: fmt.Errorf("no %q column (found %s)", n, strings.Join(header, ","))}
		}
	}
	return col, nil
}

// readExactHeader reads the header row of a CSV file that skein wrote
// with exactly the columns want, in order: the batch files of a
// permutation test. A missing or different header is a *data.FileError
// naming name.
func readExactHeader(cr *csv.Reader, name string, want []string) error {
	header, err := cr.Read()
	if err == io.EOF {
		return &data.FileError{Path: name, Line: 1, Err: errors.New("empty file: expected a header row")}
	}
	if err != nil {
		return csvError(name, err)
	}
	if !slices.Equal(header, want) {
		return &data.FileError{Path: name, Line: 1, Err: fmt.Errorf("header is %v, want %v", header, want)}
	}
	return nil
}

func csvError(name string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &data.FileError{Path: name, Line: pe.Line, Column: pe.Column, Err: pe.Err}
	}
	return fmt.Errorf("%s: %w", name, err)
}

func quoteAll(ss []string) []string {
	q := make([]string, len(ss))
	for i, s := range ss {
		q[i] = strconv.Quote(s)
	}
	return q
}

// WritePredictions writes rows as predictions.csv: the header
// participant_id,model,target,repeat,fold,observed,predicted, then one line
// per row in the order given. Numbers are written by
// strconv.FormatFloat(v, 'g', -1, 64), the shortest text that reads back as
// the same float64; NaN is written as NaN. An infinite value is an error
// (ReadPredictions would refuse it; a model that predicts infinity has
// diverged). The output depends only on rows.
func WritePredictions(w io.Writer, rows []Prediction) error {
	for i, p := range rows {
		if math.IsInf(p.Observed, 0) || math.IsInf(p.Predicted, 0) {
			return fmt.Errorf("eval: prediction %d (participant %q, model %q, target %q): observed %v, predicted %v: want finite values or NaN",
				i, p.ParticipantID, p.Model, p.Target, p.Observed, p.Predicted)
		}
	}
	cw := csv.NewWriter(w)
	if err := cw.Write(predictionColumns()); err != nil {
		return err
	}
	record := make([]string, 7)
	for _, p := range rows {
		record[0] = p.ParticipantID
		record[1] = p.Model
		record[2] = p.Target
		record[3] = strconv.Itoa(p.Repeat + 1)
		record[4] = strconv.Itoa(p.Fold + 1)
		record[5] = strconv.FormatFloat(p.Observed, 'g', -1, 64)
		record[6] = strconv.FormatFloat(p.Predicted, 'g', -1, 64)
		if err := cw.Write(record); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// tabSeparated reports whether the predictions file name, read through r,
// is tab-separated: by its extension (.tsv or .csv, any case), else by its
// header row holding a tab and no comma. It reads nothing from r.
func tabSeparated(r *bufio.Reader, name string) bool {
	switch strings.ToLower(filepath.Ext(name)) {
	case ".tsv":
		return true
	case ".csv":
		return false
	}
	head, _ := r.Peek(4096)
	if i := bytes.IndexByte(head, '\n'); i >= 0 {
		head = head[:i]
	}
	return bytes.IndexByte(head, '\t') >= 0 && bytes.IndexByte(head, ',') < 0
}
