package data

import (
	"errors"
	"fmt"
	"strings"
)

// FileError is a problem found in one of the files skein reads (a cohort's
// files, a predictions file, a run folder's files), with its place,
// modelled on encoding/csv's ParseError. Its message reads like
//
//	fc/sub-03_fc.tsv: line 4, column 7: value "abc" is not a number
//	participants.tsv: line 5, column 3 ("recall"): value "x" is not a number
//
// Line and Column are 1-based; 0 means the place has no line (a .npy file)
// or the problem concerns the whole line or file.
type FileError struct {
	Path       string // the file, as found from the experiment's folder
	Line       int    // 1-based line; 0 when not applicable
	Column     int    // 1-based field number on the line; 0 when not applicable
	ColumnName string // header name of the column, "" when there is none
	Err        error  // what was expected and what was found
}

func (e *FileError) Error() string {
	var b strings.Builder
	b.WriteString(e.Path)
	sep := ": "
	if e.Line > 0 {
		fmt.Fprintf(&b, "%sline %d", sep, e.Line)
		sep = ", "
	}
	switch {
	case e.Column > 0 && e.ColumnName != "":
		fmt.Fprintf(&b, "%scolumn %d (%q)", sep, e.Column, e.ColumnName)
	case e.Column > 0:
		fmt.Fprintf(&b, "%scolumn %d", sep, e.Column)
	case e.ColumnName != "":
		fmt.Fprintf(&b, "%scolumn %q", sep, e.ColumnName)
	}
	fmt.Fprintf(&b, ": %v", e.Err)
	return b.String()
}

func (e *FileError) Unwrap() error { return e.Err }

// Is reports whether target is ErrBadFile: every FileError is one.
func (e *FileError) Is(target error) bool { return target == ErrBadFile }

// ErrBadFile is matched (errors.Is) by every *FileError, whichever file
// of the tool it is in: a cohort's files, predictions, null scores,
// sample-size curves, a run folder's files. errors.As gives the place.
var ErrBadFile = errors.New("bad file")

// fileErrorf is a FileError at path, line and column with a formatted message.
func fileErrorf(path string, line, column int, format string, args ...any) *FileError {
	return &FileError{Path: path, Line: line, Column: column, Err: fmt.Errorf(format, args...)}
}

// TooFewError reports a cohort left with fewer participants than
// min_participants after every exclusion.
type TooFewError struct {
	Included int // participants left
	Min      int // the min_participants setting
	Excluded int // participants excluded
}

func (e *TooFewError) Error() string {
	return fmt.Sprintf("only %d participants left after %d exclusions; cohort.min_participants is %d", e.Included, e.Excluded, e.Min)
}
