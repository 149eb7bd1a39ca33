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
// observed row is a *data.FileError matching data.ErrBadFile.
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
	if err := WriteNullCSV(&buf, []NullDistribution{nd}); err != nil {
		t.Fatal(err)
	}
	back, err := ReadNullCSV(&buf, "permutations.csv")
	if err != nil || len(back) != 1 || len(back[0].Null) != 4 {
		t.Fatalf("read back %+v, %v", back, err)
	}
	// Phipson & Smyth 2010: (1 + #{null ≥ 0.5}) / (1 + 4) = 2/5.
	if p := back[0].P.PearsonWithin; p != 0.4 {
		t.Errorf("p of r within folds %v, want 0.4", p)
	}
	older := "model,target,permutation,pearson_r,mae\nm,t,0,0.5,2\nm,t,1,0.6,1\n"
	if got, err := ReadNullCSV(strings.NewReader(older), "old.csv"); err != nil || !math.IsNaN(got[0].P.AMI) || got[0].P.Pearson != 1 {
		t.Errorf("older file: %+v, %v", got, err)
	}
	for _, bad := range []struct{ text, want string }{
		{"model,target,permutation,pearson_r\nm,t,1,0.1\n", `line 2, column 3 ("permutation"): model "m", target "t" starts at permutation 1`},
		{"model,target,permutation,pearson_r\nm,t,0,high\n", `line 2, column 4 ("pearson_r"): want a number or NaN, found "high"`},
		{"model,permutation\n", `line 1: no "target" column`},
	} {
		_, err := ReadNullCSV(strings.NewReader(bad.text), "permutations.csv")
		var fe *data.FileError
		if !errors.As(err, &fe) || !errors.Is(err, data.ErrBadFile) || !strings.Contains(err.Error(), "permutations.csv: "+bad.want) {
			t.Errorf("%q: error %v, want a FileError saying %q", bad.text, err, bad.want)
		}
	}
}
