package synth_test

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"codeberg.org/sbinet/npyio"
	"github.com/pelletier/go-toml/v2"
	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
)

// readTable parses a tab-separated file with encoding/csv.
func readTable(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comma = '\t'
	rows, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

func readTSVMatrix(t *testing.T, path string) *mat.Dense {
	t.Helper()
	rows := readTable(t, path)
	m := mat.NewDense(len(rows), len(rows[0]), nil)
	for i, row := range rows {
		for j, cell := range row {
			v, err := strconv.ParseFloat(cell, 64)
			if err != nil {
				t.Fatalf("%s: %v", path, err)
			}
			m.Set(i, j, v)
		}
	}
	return m
}

func readNPYMatrix(t *testing.T, path string) *mat.Dense {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var m mat.Dense
	if err := npyio.Read(f, &m); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return &m
}

func cellValue(cell string) float64 {
	if cell == "n/a" {
		return math.NaN()
	}
	v, err := strconv.ParseFloat(cell, 64)
	if err != nil {
		panic(err)
	}
	return v
}

func sameValue(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }

// TestWriteReadBack writes a cohort, parses the files back by hand and
// finds the same values.
func TestWriteReadBack(t *testing.T) {
	c := generate(t, synth.Config{N: 12, P: 9, Seed: 37, FamilySize: 2, Missing: 0.2, Motion: 0.3})
	for _, format := range []string{"tsv", "npy"} {
		t.Run(format, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "cohort")
			if err := synth.Write(dir, c, format); err != nil {
				t.Fatal(err)
			}
			rows := readTable(t, filepath.Join(dir, "participants.tsv"))
			wantHeader := "participant_id family recall fluency age sex motion"
			if got := strings.Join(rows[0], " "); got != wantHeader {
				t.Fatalf("header %q, want %q", got, wantHeader)
			}
			if len(rows) != len(c.Participants)+1 {
				t.Fatalf("%d rows, want %d", len(rows), len(c.Participants)+1)
			}
			sawMissing := false
			for i, p := range c.Participants {
				row := rows[i+1]
				if row[0] != p.ID || row[1] != p.Group {
					t.Errorf("row %d: %q %q, want %q %q", i+2, row[0], row[1], p.ID, p.Group)
				}
				for k, s := range p.Scores {
					sawMissing = sawMissing || row[2+k] == "n/a"
					if !sameValue(cellValue(row[2+k]), s) {
						t.Errorf("row %d, %s: %q, want %v", i+2, c.Targets[k], row[2+k], s)
					}
				}
				if cellValue(row[4]) != p.Covariates[0] || cellValue(row[6]) != p.Covariates[2] {
					t.Errorf("row %d: age %q motion %q, want %v %v", i+2, row[4], row[6], p.Covariates[0], p.Covariates[2])
				}
				if want := map[float64]string{0: "F", 1: "M"}[p.Covariates[1]]; row[5] != want {
					t.Errorf("row %d: sex %q, want %q", i+2, row[5], want)
				}
				read := readTSVMatrix
				if format == "npy" {
					read = readNPYMatrix
				}
				fc := read(t, filepath.Join(dir, "fc", p.ID+"_fc."+format))
				sc := read(t, filepath.Join(dir, "sc", p.ID+"_sc."+format))
				if !mat.Equal(fc, p.Functional) || !mat.Equal(sc, p.Structural) {
					t.Errorf("%s: matrices read back differ", p.ID)
				}
			}
			if !sawMissing {
				t.Error("no n/a cell written, want some with Missing 0.2")
			}
			regions, err := os.ReadFile(filepath.Join(dir, "regions.txt"))
			if err != nil || string(regions) != strings.Join(c.Regions, "\n")+"\n" {
				t.Errorf("regions.txt: %q, %v", regions, err)
			}
			planted := readTable(t, filepath.Join(dir, "planted.tsv"))
			if want := 1 + 2*len(c.Truth[0].Positive) + 2*len(c.Truth[1].Positive); len(planted) != want {
				t.Errorf("planted.tsv has %d rows, want %d", len(planted), want)
			}
			if entries, _ := filepath.Glob(dir + ".tmp-*"); len(entries) > 0 {
				t.Errorf("left behind %v", entries)
			}
		})
	}
}

// TestWriteLoad checks that the experiment.toml Write makes is one that
// skein's loader reads with the values Generate made, Fisher z and log1p
// applied.
func TestWriteLoad(t *testing.T) {
	c := generate(t, synth.Config{N: 15, P: 8, Seed: 41, FamilySize: 3})
	for _, format := range []string{"tsv", "npy"} {
		dir := filepath.Join(t.TempDir(), "cohort")
		if err := synth.Write(dir, c, format); err != nil {
			t.Fatal(err)
		}
		raw, err := os.ReadFile(filepath.Join(dir, "experiment.toml"))
		if err != nil {
			t.Fatal(err)
		}
		var exp struct {
			Cohort     data.Source     `toml:"cohort"`
			Preprocess data.Preprocess `toml:"preprocess"`
		}
		dec := toml.NewDecoder(bytes.NewReader(raw))
		dec.DisallowUnknownFields()
		if err := dec.Decode(&exp); err != nil {
			t.Fatalf("%s experiment.toml: %v", format, err)
		}
		loaded, err := data.Load(exp.Cohort, exp.Preprocess, dir)
		if err != nil {
			t.Fatalf("%s: %v", format, err)
		}
		if len(loaded.Participants) != 15 || len(loaded.Excluded) != 0 || loaded.P() != 8 {
			t.Fatalf("%s: loaded %d participants (%d excluded), %d regions", format, len(loaded.Participants), len(loaded.Excluded), loaded.P())
		}
		for i, p := range loaded.Participants {
			want := c.Participants[i]
			if p.ID != want.ID || p.Group != want.Group || p.Scores[0] != want.Scores[0] || p.Covariates[1] != want.Covariates[1] {
				t.Errorf("%s: participant %d: got %s %s %v %v, want %s %s %v %v", format, i, p.ID, p.Group, p.Scores, p.Covariates, want.ID, want.Group, want.Scores, want.Covariates)
			}
			if got, want := p.Functional.At(0, 1), math.Atanh(want.Functional.At(0, 1)); math.Abs(got-want) > 1e-15 {
				t.Errorf("%s: %s fc[0,1] = %v, want atanh = %v", format, p.ID, got, want)
			}
		}
	}
}

func TestWriteRefusesNonEmptyFolder(t *testing.T) {
	c := generate(t, synth.Config{N: 10, P: 8, Seed: 43})
	dir := t.TempDir()
	keep := filepath.Join(dir, "notes.txt")
	if err := os.WriteFile(keep, []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := synth.Write(dir, c, "tsv"); !errors.Is(err, synth.ErrExists) {
		t.Fatalf("got %v, want ErrExists", err)
	}
	if _, err := os.Stat(keep); err != nil {
		t.Fatalf("Write touched the existing folder: %v", err)
	}
	if err := synth.Replace(dir, c, "tsv"); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(keep); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("Replace kept the old folder's file: %v", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "experiment.toml")); err != nil {
		t.Error(err)
	}
	// An empty folder may be written into.
	empty := t.TempDir()
	if err := synth.Write(empty, c, "npy"); err != nil {
		t.Error(err)
	}
	if err := synth.Write(dir, c, "csv"); err == nil || !strings.Contains(err.Error(), `"csv"`) {
		t.Errorf("format csv: got %v", err)
	}
}

// TestWriteFailureLeavesNothing checks that a Write that fails midway
// leaves neither the folder nor its temporary.
func TestWriteFailureLeavesNothing(t *testing.T) {
	c := generate(t, synth.Config{N: 10, P: 8, Seed: 47})
	c.Participants[5].Structural = nil // fails after some files are written
	parent := t.TempDir()
	dir := filepath.Join(parent, "cohort")
	if err := synth.Write(dir, c, "tsv"); err == nil {
		t.Fatal("got no error")
	}
	entries, err := os.ReadDir(parent)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		names = append(names, e.Name())
	}
	if len(names) != 0 {
		t.Errorf("left behind %v", names)
	}
	c.Participants[5].ID = "../x"
	if err := synth.Write(dir, c, "tsv"); err == nil || !strings.Contains(err.Error(), `"../x" cannot name a file`) {
		t.Errorf("bad id: got %v", err)
	}
}

func TestExperimentTOMLText(t *testing.T) {
	c := generate(t, synth.Config{N: 10, P: 8, Seed: 53})
	dir := filepath.Join(t.TempDir(), "cohort")
	if err := synth.Write(dir, c, "npy"); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(filepath.Join(dir, "experiment.toml"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var text strings.Builder
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		text.WriteString(sc.Text() + "\n")
	}
	for _, want := range []string{
		"not a\n# diagnostic device",
		`files = "fc/{participant_id}_fc.npy"`,
		`targets = ["recall", "fluency"]`,
		"ceiling r = 0.800",
	} {
		if !strings.Contains(text.String(), want) {
			t.Errorf("experiment.toml lacks %q:\n%s", want, text.String())
		}
	}
	if strings.Contains(text.String(), "group =") {
		t.Error("group key written for unrelated participants")
	}
}
