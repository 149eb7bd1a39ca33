package experiment

import (
	"bytes"
	"context"
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
		scores, _, err := PermutationBlock(ctx, r, pc, nil, block[0], block[1], observed.Bins)
		if err != nil {
			t.Fatal(err)
		}
		var raw bytes.Buffer
		if err := eval.WriteNullScores(&raw, scores); err != nil {
			t.Fatal(err)
		}
		back, err := eval.ReadNullScores(&raw, "block.csv")
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
