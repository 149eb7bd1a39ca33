package eval

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data"
)

func TestNullScoresRoundTrip(t *testing.T) {
	in := []NullScores{{Model: "m,1", Target: "t", Permutation: 3, Scores: Scores{N: 5, Missing: 1, Bins: 10}}}
	for _, m := range Metrics() {
		in[0].Set(m, 0.1+1/3.0)
	}
	in[0].NMI = math.NaN()
	var raw bytes.Buffer
	if err := WriteNullScores(&raw, in); err != nil {
		t.Fatal(err)
	}
	text := raw.String()
	out, err := ReadNullScores(&raw, "x.csv")
	if err != nil || len(out) != 1 || out[0].Pearson != in[0].Pearson || !math.IsNaN(out[0].NMI) || out[0].Model != "m,1" || out[0].N != 5 {
		t.Fatalf("round trip: %v, %+v", err, out)
	}
	bad := strings.Replace(text, ",3,5,", ",three,5,", 1)
	if _, err := ReadNullScores(strings.NewReader(bad), "x.csv"); err == nil || !strings.Contains(err.Error(), `x.csv: line 2, column 3 ("permutation")`) {
		t.Errorf("bad permutation cell: %v", err)
	}
}

// TestNullCSVRoundTrip: ReadNullCSV reads back what WriteNullCSV wrote,
// p-values recomputed by PermutationPValue; a file without the newer
// metric columns reads with those metrics NaN; a bad cell or a missing
// observed row is a *data.FileError matching data.ErrBadFile. A class
// label's null AUC within folds reads back from the lines with an
// auc_within cell; a file of an older skein, whose auc column held pooled
// AUC, is refused.
func TestNullCSVRoundTrip(t *testing.T) {
	nd := NullDistribution{Model: "ridge", Target: "recall"}
	for k, r := range []float64{0.5, 0.1, 0.6, 0.2, 0.3} {
		var s Scores
		for _, m := range Metrics() {
			s.Set(m, r)
		}
		if k == 0 {
			nd.Observed = s
		} else {
			nd.Null = append(nd.Null, s)
		}
	}
	var buf bytes.Buffer
	if err := WriteNullCSV(&buf, []NullDistribution{nd}, nil); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(buf.String(), "auc") {
		t.Errorf("a file without labels has an auc column:\n%s", buf.String())
	}
	back, labels, err := ReadNullCSV(&buf, "permutations.csv")
	if err != nil || len(back) != 1 || len(back[0].Null) != 4 || labels != nil {
		t.Fatalf("read back %+v, %+v, %v", back, labels, err)
	}
	// Phipson & Smyth 2010: (1 + #{null ≥ 0.5}) / (1 + 4) = 2/5.
	if p := back[0].P.PearsonWithin; p != 0.4 {
		t.Errorf("p of r within folds %v, want 0.4", p)
	}
	older := "model,target,permutation,pearson_r,mae\nm,t,0,0.5,2\nm,t,1,0.6,1\n"
	if got, _, err := ReadNullCSV(strings.NewReader(older), "old.csv"); err != nil || !math.IsNaN(got[0].P.AMI) || got[0].P.Pearson != 1 {
		t.Errorf("older file: %+v, %v", got, err)
	}
	for _, bad := range []struct{ text, want string }{
		{"model,target,permutation,pearson_r\nm,t,1,0.1\n", `line 2, column 3 ("permutation"): model "m", target "t" starts at permutation 1`},
		{"model,target,permutation,pearson_r\nm,t,0,high\n", `line 2, column 4 ("pearson_r"): want a number or NaN, found "high"`},
		{"model,permutation\n", `line 1: no "target" column`},
		{"model,target,permutation,pearson_r,auc_within\nm,dx,1,,0.5\n", `line 2, column 3 ("permutation"): model "m", label "dx" starts at permutation 1`},
		{"model,target,permutation,pearson_r,auc_within\nm,dx,0,,0.5\nm,dx,2,,0.5\n", `line 3, column 3 ("permutation"): model "m", label "dx": permutation 2, want 1`},
		{"model,target,permutation,pearson_r,auc_within\nm,dx,0,,good\n", `line 2, column 5 ("auc_within"): want a number or NaN, found "good"`},
		{"model,target,permutation,pearson_r,auc\nm,dx,0,,0.5\n", `line 1, column 5 ("auc"): the pooled AUC of an older skein`},
	} {
		_, _, err := ReadNullCSV(strings.NewReader(bad.text), "permutations.csv")
		var fe *data.FileError
		if !errors.As(err, &fe) || !errors.Is(err, data.ErrBadFile) || !strings.Contains(err.Error(), "permutations.csv: "+bad.want) {
			t.Errorf("%q: error %v, want a FileError saying %q", bad.text, err, bad.want)
		}
	}

	// Phipson & Smyth 2010: (1 + #{null ≥ 0.8}) / (1 + 4) = 3/5, the NaN
	// counted as at least as extreme (PermutationPValue's conservative
	// choice).
	dx := ClassNullDistribution{Model: "logistic", Label: "diagnosis", Observed: 0.8, Null: []float64{0.5, 0.85, 0.4, math.NaN()}}
	buf.Reset()
	if err := WriteNullCSV(&buf, []NullDistribution{nd}, []ClassNullDistribution{dx}); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	if want := "logistic,diagnosis,0,,,,,,,,,,0.8\n"; !strings.Contains(text, want) || !strings.HasSuffix(strings.SplitN(text, "\n", 2)[0], ",ami,auc_within") {
		t.Errorf("file with a label lacks %q or the auc_within column:\n%s", want, text)
	}
	back, labels, err = ReadNullCSV(&buf, "permutations.csv")
	if err != nil || len(back) != 1 || back[0].P.PearsonWithin != 0.4 || len(labels) != 1 {
		t.Fatalf("read back %+v, %+v, %v", back, labels, err)
	}
	got := labels[0]
	if got.Model != "logistic" || got.Label != "diagnosis" || got.Observed != 0.8 || len(got.Null) != 4 || !math.IsNaN(got.Null[3]) || got.P != 0.6 {
		t.Errorf("label read back as %+v, want %+v with p 0.6", got, dx)
	}
}
