package data

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"strings"
)

// table is a delimited text file with a header row: the participants table.
type table struct {
	path   string
	header []string   // column names, trimmed
	rows   [][]string // cells, trimmed; every row has len(header) cells
	lines  []int      // 1-based file line of each row
}

// column returns the index of the column named name, or -1.
func (t *table) column(name string) int {
	for i, h := range t.header {
		if h == name {
			return i
		}
	}
	return -1
}

// readTable reads a participants table, choosing the format by extension:
// .tsv is tab-separated without quoting (as BIDS writes it), .csv is
// comma-separated with RFC 4180 quoting.
func readTable(path string, read func(string, int64) ([]byte, error)) (*table, error) {
	var comma rune
	switch strings.ToLower(filepath.Ext(path)) {
	case ".tsv":
		comma = '\t'
	case ".csv":
		comma = ','
	default:
		return nil, &FileError{Path: path, Err: fmt.Errorf("participants table must end in .tsv (tab-separated) or .csv (comma-separated), found %q", filepath.Ext(path))}
	}
	raw, err := read(path, maxTableBytes)
	if err != nil {
		return nil, fmt.Errorf("participants table: %w", err)
	}
	return parseTable(path, raw, comma)
}

// parseTable parses raw as a table with a header row, fields separated by
// comma ('\t' or ','). Blank lines are skipped; a leading UTF-8 byte order
// mark is dropped; every cell is trimmed of surrounding white space.
func parseTable(path string, raw []byte, comma rune) (*table, error) {
	raw = bytes.TrimPrefix(raw, []byte("\ufeff"))
	var records [][]string
	var lines []int
	if comma == '\t' {
		for i, line := range strings.Split(string(raw), "\n") {
			line = strings.TrimSuffix(line, "\r")
			if strings.TrimSpace(line) == "" {
				continue
			}
			records = append(records, strings.Split(line, "\t"))
			lines = append(lines, i+1)
		}
	} else {
		r := csv.NewReader(bytes.NewReader(raw))
		r.Comma = comma
		r.FieldsPerRecord = -1
		for {
			rec, err := r.Read()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				var pe *csv.ParseError
				if errors.As(err, &pe) {
					return nil, &FileError{Path: path, Line: pe.Line, Column: pe.Column, Err: pe.Err}
				}
				return nil, &FileError{Path: path, Err: err}
			}
			line, _ := r.FieldPos(0)
			if len(rec) == 1 && strings.TrimSpace(rec[0]) == "" {
				continue
			}
			records = append(records, rec)
			lines = append(lines, line)
		}
	}
	if len(records) == 0 {
		return nil, &FileError{Path: path, Err: errors.New("file is empty; expected a header row naming the columns")}
	}
	t := &table{path: path}
	for i, h := range records[0] {
		h = strings.TrimSpace(h)
		if h == "" {
			return nil, &FileError{Path: path, Line: lines[0], Column: i + 1, Err: errors.New("header cell is empty; expected a column name")}
		}
		if j := t.column(h); j >= 0 {
			return nil, &FileError{Path: path, Line: lines[0], Column: i + 1, ColumnName: h, Err: fmt.Errorf("column name is already used by column %d", j+1)}
		}
		t.header = append(t.header, h)
	}
	for k, rec := range records[1:] {
		line := lines[k+1]
		if len(rec) != len(t.header) {
			return nil, &FileError{Path: path, Line: line, Err: fmt.Errorf("found %d fields, expected %d as in the header row", len(rec), len(t.header))}
		}
		row := make([]string, len(rec))
		for i, c := range rec {
			row[i] = strings.TrimSpace(c)
		}
		t.rows = append(t.rows, row)
		t.lines = append(t.lines, line)
	}
	return t, nil
}

// isMissing reports whether a table cell stands for a missing value: an
// empty cell or "n/a" (the BIDS convention).
func isMissing(cell string) bool { return cell == "" || cell == "n/a" }
