package experiment

import (
	"bytes"
	"context"
	"math"
	"reflect"
	"slices"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/eval"
)

// TestAssembleNullsEqualsPermutationTest: a permutation test run in blocks
// (each block its own RunPermutations over a slice of the permutations,
// its scores written and read back) gives the same null distributions, to
// the last bit, as PermutationTest on one machine.
func TestAssembleNullsEqualsPermutationTest(t *testing.T) {
	exp, r := nullRunner(t, 3, 10)
	exp.Permutation.Chunk = new(4)
	ctx := context.Background()
	res, err := r.Run(ctx)
	if err != nil {
		t.Fatal(err)
	}
	rows := res.Predictions
	observed := eval.Summarize(rows, 0, true)
	want, err := PermutationTest(ctx, r, exp.Permutation, observed)
	if err != nil {
		t.Fatal(err)
	}

	pc := exp.Permutation
	var all []eval.NullScores
	for _, block := range [][2]int{{8, 10}, {0, 4}, {4, 8}} { // in any order
		scores, err := PermutationBlock(ctx, r, pc, nil, block[0], block[1], observed.Bins)
		if err != nil {
			t.Fatal(err)
		}
		raw, err := eval.WriteNullScores(scores)
		if err != nil {
			t.Fatal(err)
		}
		back, err := eval.ReadNullScores(bytes.NewReader(raw), "block.csv")
		if err != nil {
			t.Fatal(err)
		}
		all = append(all, back...)
	}
	got, err := eval.AssembleNulls(observed, all, pc.Count)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("assembled nulls differ from PermutationTest's:\ngot  %+v\nwant %+v", got, want)
	}

	// A missing or repeated permutation is an error naming it.
	if _, err := eval.AssembleNulls(observed, all[1:], pc.Count); err == nil || !strings.Contains(err.Error(), "no scores for permutation") {
		t.Errorf("a missing permutation: %v", err)
	}
	if _, err := eval.AssembleNulls(observed, append(slices.Clone(all), all[0]), pc.Count); err == nil || !strings.Contains(err.Error(), "appears twice") {
		t.Errorf("a repeated permutation: %v", err)
	}
}

func TestNullScoresRoundTrip(t *testing.T) {
	in := []eval.NullScores{{Model: "m,1", Target: "t", Permutation: 3, Scores: eval.Scores{N: 5, Missing: 1, Bins: 10}}}
	for _, m := range eval.Metrics() {
		in[0].Set(m, 0.1+1/3.0)
	}
	in[0].NMI = math.NaN()
	raw, err := eval.WriteNullScores(in)
	if err != nil {
		t.Fatal(err)
	}
	out, err := eval.ReadNullScores(bytes.NewReader(raw), "x.csv")
	if err != nil || len(out) != 1 || out[0].Pearson != in[0].Pearson || !math.IsNaN(out[0].NMI) || out[0].Model != "m,1" || out[0].N != 5 {
		t.Fatalf("round trip: %v, %+v", err, out)
	}
	bad := strings.Replace(string(raw), ",3,5,", ",three,5,", 1)
	if _, err := eval.ReadNullScores(strings.NewReader(bad), "x.csv"); err == nil || !strings.Contains(err.Error(), "x.csv:2: column 3 (permutation)") {
		t.Errorf("bad permutation cell: %v", err)
	}
}
