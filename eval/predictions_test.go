package eval

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data"
)

func TestReadPredictionsFixture(t *testing.T) {
	path := filepath.Join("..", "testdata", "eval", "predictions.csv")
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	rows, header, err := ReadPredictions(bytes.NewReader(raw), path)
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 2*2*2*24 || !header.HasFolds() || len(header.Extra()) != 0 {
		t.Fatalf("%d rows, header %v", len(rows), header)
	}
	if !math.IsNaN(rows[5].Predicted) || !math.IsNaN(rows[30].Observed) {
		t.Errorf("missing values not read as NaN: %+v, %+v", rows[5], rows[30])
	}
	// Writing what was read gives the same bytes back: the fixture script
	// writes Python's repr, the shortest round-tripping decimal, as Go does.
	var buf bytes.Buffer
	if err := WritePredictions(&buf, rows); err != nil {
		t.Fatal(err)
	}
	if buf.String() != string(raw) {
		t.Error("WritePredictions(ReadPredictions(fixture)) differs from the fixture")
	}
}

func TestReadPredictionsColumnsByName(t *testing.T) {
	in := "predicted,age,observed,model\n1.5,30,2,ridge\nNaN,31,,ridge\n 3 ,32,NA,ridge\n"
	rows, header, err := ReadPredictions(strings.NewReader(in), "p.csv")
	if err != nil {
		t.Fatal(err)
	}
	if header.HasFolds() || !header.Has("model") || strings.Join(header.Extra(), ",") != "age" {
		t.Errorf("header %v: HasFolds %v, Extra %v", header, header.HasFolds(), header.Extra())
	}
	if len(rows) != 3 || rows[0].Observed != 2 || rows[0].Predicted != 1.5 || rows[0].Model != "ridge" || rows[2].Predicted != 3 {
		t.Errorf("rows = %+v", rows)
	}
	if !math.IsNaN(rows[1].Predicted) || !math.IsNaN(rows[1].Observed) || !math.IsNaN(rows[2].Observed) {
		t.Errorf("missing values: %+v", rows)
	}
}

// Every bad input names the file, the line and the column, and says what
// was expected and what was found.
func TestReadPredictionsErrors(t *testing.T) {
	tests := []struct {
		name, in  string
		line, col int
		contains  string
	}{
		{"empty file", "", 1, 0, "empty file"},
		{"no predicted column", "participant_id,observed\nsub-01,3\n", 1, 0, `no "predicted" column`},
		{"duplicate column", "observed,predicted,observed\n1,2,3\n", 1, 3, "appears twice"},
		{"empty column name", "observed,,predicted\n1,2,3\n", 1, 2, "empty column name"},
		{"not a number", "observed,predicted\n1,2\n3,abc\n", 3, 2, `expected a number (or empty, NaN or NA for a missing value), found "abc"`},
		{"infinite", "observed,predicted\n+Inf,2\n", 2, 1, "expected a finite number"},
		{"bad fold", "observed,predicted,repeat,fold\n1,2,1,x\n", 2, 4, `expected an integer ≥ 1 (repeats and folds are numbered from 1), found "x"`},
		{"repeat from 0", "observed,predicted,repeat,fold\n1,2,0,1\n", 2, 3, `expected an integer ≥ 1 (repeats and folds are numbered from 1), found "0"`},
		{"negative repeat", "observed,predicted,repeat,fold\n1,2,-1,1\n", 2, 3, "expected an integer ≥ 1"},
		{"short row", "observed,predicted\n1,2\n3\n", 3, 1, "wrong number of fields"},
		{"participant twice in a repeat", "participant_id,repeat,observed,predicted\ns1,1,1,2\ns2,1,1,2\ns1,2,1,2\ns1,1,3,4\n", 5, 1,
			`participant "s1" already has a prediction of model "", target "", repeat 1 on line 2`},
		{"bad quote", "observed,predicted\n1,\"2\n", 2, 0, "extraneous or missing"},
	}
	for _, tt := range tests {
		_, _, err := ReadPredictions(strings.NewReader(tt.in), "run/predictions.csv")
		var pe *data.FileError
		if !errors.As(err, &pe) {
			t.Errorf("%s: error %v is not a *data.FileError", tt.name, err)
			continue
		}
		if pe.Path != "run/predictions.csv" || pe.Line != tt.line || (tt.col != 0 && pe.Column != tt.col) {
			t.Errorf("%s: file, line, column = %s, %d, %d; want run/predictions.csv, %d, %d", tt.name, pe.Path, pe.Line, pe.Column, tt.line, tt.col)
		}
		if !strings.Contains(err.Error(), tt.contains) || !strings.HasPrefix(err.Error(), "run/predictions.csv:") {
			t.Errorf("%s: error %q, want it to start with the file and contain %q", tt.name, err, tt.contains)
		}
	}
}

func TestParseErrorNamesColumn(t *testing.T) {
	_, _, err := ReadPredictions(strings.NewReader("participant_id,observed,predicted\nsub-01,1,x\n"), "p.csv")
	if want := `p.csv: line 2, column 3 ("predicted"): expected a number`; err == nil || !strings.HasPrefix(err.Error(), want) {
		t.Errorf("error %q, want prefix %q", err, want)
	}
}

func TestWritePredictionsFormat(t *testing.T) {
	var buf bytes.Buffer
	rows := []Prediction{
		{ParticipantID: "sub-01", Model: "ridge", Target: "memory", Repeat: 0, Fold: 2, Observed: 0.1, Predicted: 1e21},
		{ParticipantID: "sub-02", Model: "ridge", Target: "memory", Repeat: 1, Fold: 0, Observed: -3, Predicted: math.NaN()},
	}
	if err := WritePredictions(&buf, rows); err != nil {
		t.Fatal(err)
	}
	want := "participant_id,model,target,repeat,fold,observed,predicted\n" +
		"sub-01,ridge,memory,1,3,0.1,1e+21\n" +
		"sub-02,ridge,memory,2,1,-3,NaN\n"
	if buf.String() != want {
		t.Errorf("got\n%s\nwant\n%s", buf.String(), want)
	}
}

func TestWritePredictionsRefusesInfinity(t *testing.T) {
	err := WritePredictions(&bytes.Buffer{}, []Prediction{{ParticipantID: "sub-07", Model: "net", Observed: 1, Predicted: math.Inf(1)}})
	if err == nil || !strings.Contains(err.Error(), `participant "sub-07"`) {
		t.Errorf("error %v, want one naming the participant", err)
	}
}

// FuzzReadPredictions checks that the reader never panics, that every
// failure is a *data.FileError naming the file, and that what it reads survives
// a write and a second read. The seeds run as ordinary tests.
func FuzzReadPredictions(f *testing.F) {
	for _, seed := range []string{
		"participant_id,model,target,repeat,fold,observed,predicted\nsub-01,ridge,memory,0,1,12.5,11\n",
		"observed,predicted\n1,2\n,NaN\n",
		"predicted,observed\n1e300,-0\n0x1p-3,NA\n",
		"observed,predicted\n\"1\",\"2\"\n",
		"observed,predicted,fold\n1,2,99999999999999999999\n",
		"\uFEFFobserved,predicted\n1,2\n",
		"observed\n1\n",
		"a,b\n",
		"",
	} {
		f.Add(seed)
	}
	f.Fuzz(func(t *testing.T, in string) {
		rows, _, err := ReadPredictions(strings.NewReader(in), "fuzz.csv")
		if err != nil {
			var pe *data.FileError
			if !errors.As(err, &pe) || pe.Path != "fuzz.csv" {
				t.Fatalf("error %v is not a *data.FileError naming the file", err)
			}
			return
		}
		var buf bytes.Buffer
		if err := WritePredictions(&buf, rows); err != nil {
			t.Fatal(err)
		}
		again, _, err := ReadPredictions(&buf, "again.csv")
		if err != nil {
			t.Fatalf("rereading written rows: %v", err)
		}
		if len(again) != len(rows) {
			t.Fatalf("%d rows read back, want %d", len(again), len(rows))
		}
		for i := range rows {
			a, b := rows[i], again[i]
			same := func(x, y float64) bool { return x == y || math.IsNaN(x) && math.IsNaN(y) }
			if a.ParticipantID != b.ParticipantID || a.Model != b.Model || a.Target != b.Target ||
				a.Repeat != b.Repeat || a.Fold != b.Fold || !same(a.Observed, b.Observed) || !same(a.Predicted, b.Predicted) {
				t.Fatalf("row %d: %+v read back as %+v", i, a, b)
			}
		}
	})
}
