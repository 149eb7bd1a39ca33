package data

import (
	"bytes"
	"errors"
	"fmt"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// textMatrix is a matrix read from delimited text, with where its entries
// were found so later checks can name the line and column.
type textMatrix struct {
	m      *mat.Dense
	labels []string // region labels from a header row or label column; nil if none
	lines  []int    // 1-based file line of each matrix row
	col0   int      // fields before the first value on a line: 1 with a label column, else 0
}

// position returns the file line and 1-based column of entry (i, j).
func (t *textMatrix) position(i, j int) (line, column int) {
	return t.lines[i], t.col0 + j + 1
}

// parseMatrixText parses a matrix written as delimited text. The delimiter
// is found on the first non-blank line: a tab if it has one, else a comma
// if it has one, else runs of white space. The first row is a header of
// region labels when none of its cells is a number; the
// first column holds region labels when every data row's first cell is not
// a number, or when the header is one cell shorter than the data rows.
// When both a header and a label column are present they must agree.
// Blank lines are skipped; a leading UTF-8 byte order mark is dropped; a
// separator ending a line is ignored. Every other cell must be a number (strconv.ParseFloat syntax; "NaN" and
// "Inf" parse and are caught by the finiteness check). Rows may have any
// equal length; squareness is checked by the caller.
func parseMatrixText(path string, raw []byte) (*textMatrix, error) {
	return parseText(path, raw, true)
}

// parseText is parseMatrixText; with square false, a label column and a
// header row need not agree (a series' rows are time points, its columns
// regions) and the labels returned are the header's.
func parseText(path string, raw []byte, square bool) (*textMatrix, error) {
	rows, lines := splitRows(raw)
	if len(rows) == 0 {
		return nil, &FileError{Path: path, Err: errors.New("file is empty; expected rows of numbers")}
	}

	var header []string
	headerLine := 0
	if isHeader(rows[0]) {
		header, headerLine, rows, lines = rows[0], lines[0], rows[1:], lines[1:]
		if len(rows) == 0 {
			return nil, &FileError{Path: path, Line: headerLine, Err: errors.New("found a header row but no rows of numbers")}
		}
	}
	width := len(rows[0])
	for k, r := range rows {
		if len(r) != width {
			return nil, &FileError{Path: path, Line: lines[k], Err: fmt.Errorf("found %d fields, expected %d as on line %d", len(r), width, lines[0])}
		}
	}
	labelCol := header != nil && len(header) == width-1
	if !labelCol && width > 1 {
		labelCol = true
		for _, r := range rows {
			if isNumber(r[0]) {
				labelCol = false
				break
			}
		}
	}
	t := &textMatrix{lines: lines}
	if labelCol {
		t.col0 = 1
		t.labels = make([]string, len(rows))
		for k, r := range rows {
			t.labels[k] = unquote(r[0])
		}
	}
	ncols := width - t.col0
	if header != nil {
		var hdr []string
		switch len(header) {
		case ncols:
			hdr = header
		case ncols + 1:
			hdr = header[1:] // a corner cell above the label column
		default:
			return nil, &FileError{Path: path, Line: headerLine, Err: fmt.Errorf("header row has %d labels, expected %d for %d columns of numbers", len(header), ncols, ncols)}
		}
		for k := range hdr {
			hdr[k] = unquote(hdr[k])
		}
		if t.labels != nil && square {
			for k := range min(len(hdr), len(t.labels)) {
				if hdr[k] != t.labels[k] {
					return nil, &FileError{Path: path, Line: lines[k], Column: 1, Err: fmt.Errorf("row label %q differs from column label %d %q of the header row", t.labels[k], k+1, hdr[k])}
				}
			}
			if len(hdr) != len(t.labels) {
				return nil, &FileError{Path: path, Err: fmt.Errorf("%d row labels but %d column labels; the matrix must be square", len(t.labels), len(hdr))}
			}
		}
		t.labels = hdr
	} else if !square {
		t.labels = nil // row labels of a series name time points, not regions
	}
	t.m = mat.NewDense(len(rows), ncols, nil)
	for i, r := range rows {
		for j, cell := range r[t.col0:] {
			v, err := strconv.ParseFloat(cell, 64)
			if err != nil {
				line, col := t.position(i, j)
				return nil, fileErrorf(path, line, col, "value %q is not a number", cell)
			}
			t.m.Set(i, j, v)
		}
	}
	return t, nil
}

// splitOn splits a line on sep, trims each field and drops one empty
// field after a trailing separator.
func splitOn(sep string) func(string) []string {
	return func(line string) []string {
		fields := strings.Split(strings.TrimRight(line, " "), sep)
		if len(fields) > 1 && strings.TrimSpace(fields[len(fields)-1]) == "" {
			fields = fields[:len(fields)-1]
		}
		for i, f := range fields {
			fields[i] = strings.TrimSpace(f)
		}
		return fields
	}
}

// isHeader reports whether a first row is a header of labels: none of its
// cells (the first may be an empty or text corner cell) is a number.
func isHeader(row []string) bool {
	for _, c := range row {
		if isNumber(c) {
			return false
		}
	}
	return true
}

func isNumber(s string) bool {
	_, err := strconv.ParseFloat(s, 64)
	return err == nil
}

// unquote removes one pair of surrounding double quotes from a label.
func unquote(s string) string {
	if len(s) >= 2 && s[0] == '"' && s[len(s)-1] == '"' {
		return s[1 : len(s)-1]
	}
	return s
}

// splitRows splits delimited text into the cells of its non-blank lines,
// with each row's line number (from 1). A leading byte-order mark is
// dropped; the delimiter is the first non-blank line's: a tab, else a
// comma, else white space.
func splitRows(raw []byte) (rows [][]string, lines []int) {
	raw = bytes.TrimPrefix(raw, []byte("\ufeff"))
	var split func(string) []string
	for i, line := range strings.Split(string(raw), "\n") {
		line = strings.TrimSuffix(line, "\r")
		if strings.TrimSpace(line) == "" {
			continue
		}
		if split == nil {
			switch {
			case strings.Contains(line, "\t"):
				split = splitOn("\t")
			case strings.Contains(line, ","):
				split = splitOn(",")
			default:
				split = strings.Fields
			}
		}
		rows = append(rows, split(line))
		lines = append(lines, i+1)
	}
	return rows, lines
}
