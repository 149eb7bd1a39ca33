package data

import (
	"reflect"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestParseTable(t *testing.T) {
	for _, tc := range []struct {
		name   string
		raw    string
		comma  rune
		header []string
		rows   [][]string
		lines  []int
	}{
		{"tsv", "participant_id\tage\nsub-01\t34\n\nsub-02\t \r\n", '\t',
			[]string{"participant_id", "age"}, [][]string{{"sub-01", "34"}, {"sub-02", ""}}, []int{2, 4}},
		{"tsv keeps quotes", "participant_id\tnote\nsub-01\t\"a\n", '\t',
			[]string{"participant_id", "note"}, [][]string{{"sub-01", `"a`}}, []int{2}},
		{"csv quoted", "\ufeffparticipant_id,site\nsub-01,\"North, 2\"\n", ',',
			[]string{"participant_id", "site"}, [][]string{{"sub-01", "North, 2"}}, []int{2}},
		{"header only", "participant_id,age\n", ',', []string{"participant_id", "age"}, nil, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			tbl, err := parseTable("p.tsv", []byte(tc.raw), tc.comma)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(tbl.header, tc.header) || !reflect.DeepEqual(tbl.rows, tc.rows) || !reflect.DeepEqual(tbl.lines, tc.lines) {
				t.Errorf("got %q %q %v, want %q %q %v", tbl.header, tbl.rows, tbl.lines, tc.header, tc.rows, tc.lines)
			}
		})
	}
}

func TestParseTableErrors(t *testing.T) {
	for _, tc := range []struct {
		name, raw string
		comma     rune
		want      string
	}{
		{"empty", "\n\n", '\t', "p.tsv: file is empty; expected a header row"},
		{"short row", "participant_id\tage\nsub-01\n", '\t', "p.tsv: line 2: found 1 fields, expected 2 as in the header row"},
		{"long row", "participant_id,age\nsub-01,3,4\n", ',', "p.tsv: line 2: found 3 fields, expected 2"},
		{"empty header cell", "participant_id\t\tage\n", '\t', "p.tsv: line 1, column 2: header cell is empty"},
		{"duplicate column", "participant_id\tage\tage\n", '\t', `p.tsv: line 1, column 3 ("age"): column name is already used by column 2`},
		{"csv bare quote", "participant_id,age\nsub\"01,3\n", ',', `p.tsv: line 2, column 4: bare " in non-quoted-field`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := parseTable("p.tsv", []byte(tc.raw), tc.comma)
			if err == nil || err.Error() != tc.want && !strings.HasPrefix(err.Error(), tc.want) {
				t.Errorf("error %v, want %q", err, tc.want)
			}
		})
	}
}

func TestParseMatrixText(t *testing.T) {
	want := mat.NewDense(2, 2, []float64{1, 0.5, 0.5, 1})
	ab := []string{"a", "b"}
	for _, tc := range []struct {
		name   string
		raw    string
		labels []string
		line0  int // file line of the first matrix row
		col0   int
	}{
		{"tab", "1\t0.5\n0.5\t1\n", nil, 1, 0},
		{"comma", "1, 0.5\n0.5 ,1\n", nil, 1, 0},
		{"white space", "  1   0.5\n0.5 1  \n\n", nil, 1, 0},
		{"header", "a,b\n1,0.5\n0.5,1\n", ab, 2, 0},
		{"header with corner", "region\ta\tb\na\t1\t0.5\nb\t0.5\t1\n", ab, 2, 1},
		{"header with empty corner", "\ta\tb\na\t1\t0.5\nb\t0.5\t1\n", ab, 2, 1},
		{"header without corner", "a b\na 1 0.5\nb 0.5 1\n", ab, 2, 1},
		{"label column", "\ufeff\"a\",1,0.5\r\n\"b\",0.5,1\r\n", ab, 1, 1},
		{"blank lines first", "\n\n1 0.5\n0.5 1\n", nil, 3, 0},
		{"trailing separators", "1,0.5,\n0.5,1, \n", nil, 1, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			tm, err := parseMatrixText("m.txt", []byte(tc.raw))
			if err != nil {
				t.Fatal(err)
			}
			if !mat.Equal(tm.m, want) {
				t.Errorf("matrix %v, want %v", mat.Formatted(tm.m), mat.Formatted(want))
			}
			if !reflect.DeepEqual(tm.labels, tc.labels) {
				t.Errorf("labels %q, want %q", tm.labels, tc.labels)
			}
			if line, col := tm.position(0, 1); line != tc.line0 || col != tc.col0+2 {
				t.Errorf("position(0, 1) = line %d, column %d; want %d, %d", line, col, tc.line0, tc.col0+2)
			}
		})
	}
}

func TestParseMatrixTextErrors(t *testing.T) {
	for _, tc := range []struct{ name, raw, want string }{
		{"empty", " \n", "m.txt: file is empty; expected rows of numbers"},
		{"header only", "a\tb\n", "m.txt: line 1: found a header row but no rows of numbers"},
		{"not a number", "1\t0.5\n0.5\tabc\n", `m.txt: line 2, column 2: value "abc" is not a number`},
		{"missing last value", "x\ta\tb\na\t1\t0.5\nb\t0.5\t\n", "m.txt: line 3: found 2 fields, expected 3 as on line 2"},
		{"empty value", "x\ta\tb\na\t1\t0.5\nb\t\t1\n", `m.txt: line 3, column 2: value "" is not a number`},
		{"n/a cell", "1 n/a\n0.5 1\n", `m.txt: line 1, column 2: value "n/a" is not a number`},
		{"ragged", "1,0.5\n0.5\n", "m.txt: line 2: found 1 fields, expected 2 as on line 1"},
		{"header too long", "a\tb\tc\td\n1\t0.5\n0.5\t1\n", "m.txt: line 1: header row has 4 labels, expected 2"},
		{"labels disagree", "r,a,b\na,1,0.5\nc,0.5,1\n", `m.txt: line 3, column 1: row label "c" differs from column label 2 "b"`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := parseMatrixText("m.txt", []byte(tc.raw))
			if err == nil || !strings.HasPrefix(err.Error(), tc.want) {
				t.Errorf("error %v, want %q", err, tc.want)
			}
		})
	}
}

func TestParseIDList(t *testing.T) {
	for _, tc := range []struct {
		name, raw string
		ids       []string
		lines     []int
		want      string // error, "" for none
	}{
		{"plain", "sub-01\nsub-02\n", []string{"sub-01", "sub-02"}, []int{1, 2}, ""},
		{"header and trailing blanks", "participant_id\n sub-01 \r\nsub-02\n\n\n", []string{"sub-01", "sub-02"}, []int{2, 3}, ""},
		{"blank inside", "sub-01\n\nsub-02\n", nil, nil, "ids.txt: line 2: line is blank; expected one participant_id a line"},
		{"duplicate", "sub-01\nsub-02\nsub-01\n", nil, nil, `ids.txt: line 3: participant_id "sub-01" is already on line 1`},
		{"empty", "\n", nil, nil, "ids.txt: file is empty; expected one participant_id a line"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ids, lines, err := parseIDList("ids.txt", []byte(tc.raw), "participant_id")
			if tc.want != "" {
				if err == nil || err.Error() != tc.want {
					t.Errorf("error %v, want %q", err, tc.want)
				}
				return
			}
			if err != nil || !reflect.DeepEqual(ids, tc.ids) || !reflect.DeepEqual(lines, tc.lines) {
				t.Errorf("got %q %v %v, want %q %v", ids, lines, err, tc.ids, tc.lines)
			}
		})
	}
}

func TestFileErrorMessage(t *testing.T) {
	for _, tc := range []struct {
		err  *FileError
		want string
	}{
		{fileErrorf("fc/sub-03_fc.tsv", 4, 7, "value %q is not a number", "abc"), `fc/sub-03_fc.tsv: line 4, column 7: value "abc" is not a number`},
		{&FileError{Path: "p.tsv", Line: 5, Column: 3, ColumnName: "recall", Err: errString("bad")}, `p.tsv: line 5, column 3 ("recall"): bad`},
		{&FileError{Path: "p.tsv", ColumnName: "age", Err: errString("bad")}, `p.tsv: column "age": bad`},
		{&FileError{Path: "m.npy", Err: errString("bad")}, "m.npy: bad"},
	} {
		if got := tc.err.Error(); got != tc.want {
			t.Errorf("Error() = %q, want %q", got, tc.want)
		}
	}
}

type errString string

func (e errString) Error() string { return string(e) }

func FuzzParseTable(f *testing.F) {
	f.Add([]byte("participant_id\tage\tsex\nsub-01\t34\tF\nsub-02\tn/a\t\n"), true)
	f.Add([]byte("participant_id,site\nsub-01,\"North, 2\"\n"), false)
	f.Add([]byte("\ufeffa,b\n1\n"), false)
	f.Fuzz(func(t *testing.T, raw []byte, tsv bool) {
		comma := ','
		if tsv {
			comma = '\t'
		}
		tbl, err := parseTable("fuzz.tsv", raw, comma)
		if err != nil {
			return
		}
		if len(tbl.rows) != len(tbl.lines) {
			t.Fatalf("%d rows, %d lines", len(tbl.rows), len(tbl.lines))
		}
		for _, r := range tbl.rows {
			if len(r) != len(tbl.header) {
				t.Fatalf("row of %d cells, header of %d", len(r), len(tbl.header))
			}
		}
	})
}

func FuzzParseMatrixText(f *testing.F) {
	f.Add([]byte("region\ta\tb\na\t1\t0.5\nb\t0.5\t1\n"))
	f.Add([]byte("1,0.5\n0.5,1\n"))
	f.Add([]byte(" 1 NaN\n Inf 1\n"))
	f.Add([]byte("a b\na 1 0.5\n"))
	f.Fuzz(func(t *testing.T, raw []byte) {
		tm, err := parseMatrixText("fuzz.txt", raw)
		if err != nil {
			return
		}
		r, c := tm.m.Dims()
		if len(tm.lines) != r || (tm.labels != nil && len(tm.labels) != r && len(tm.labels) != c) {
			t.Fatalf("%d × %d matrix with %d lines and %d labels", r, c, len(tm.lines), len(tm.labels))
		}
		tm.position(r-1, c-1)
	})
}

func FuzzParseIDList(f *testing.F) {
	f.Add([]byte("participant_id\nsub-01\nsub-02\n\n"))
	f.Add([]byte("a\n\nb"))
	f.Fuzz(func(t *testing.T, raw []byte) {
		ids, lines, err := parseIDList("fuzz.txt", raw, "participant_id")
		if err != nil {
			return
		}
		seen := map[string]bool{}
		for k, id := range ids {
			if id == "" || seen[id] || lines[k] < 1 {
				t.Fatalf("bad entry %q at line %d", id, lines[k])
			}
			seen[id] = true
		}
	})
}
