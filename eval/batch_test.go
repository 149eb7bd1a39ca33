package eval

import (
	"bytes"
	"context"
	"math"
	"reflect"
	"slices"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/train"
)

// TestAssembleNullsEqualsPermutationTest: a permutation test run in blocks
// (each block its own RunPermutations over a slice of the permutations,
// its scores written and read back) gives the same null distributions, to
// the last bit, as PermutationTest on one machine.
func TestAssembleNullsEqualsPermutationTest(t *testing.T) {
	r := nullRunner(t, 3, 10)
	r.Experiment.Permutation.Chunk = 4
	ctx := context.Background()
	res, err := r.Run(ctx)
	if err != nil {
		t.Fatal(err)
	}
	rows := res.Predictions
	observed := Summarize(rows, 0, true)
	want, err := PermutationTest(ctx, r, observed)
	if err != nil {
		t.Fatal(err)
	}

	pc := r.Experiment.Permutation
	perms := train.Permutations(len(r.Cohort.Participants), train.Groups(r.Cohort), pc.Blocks, pc.Count, uint64(r.Experiment.Seed))
	var all []NullScores
	for _, block := range [][2]int{{8, 10}, {0, 4}, {4, 8}} { // in any order
		var scores []NullScores
		err := r.RunPermutations(ctx, perms[block[0]:block[1]], nil, pc.Chunk, func(run train.NullRun) error {
			run.Permutation += block[0]
			scores = append(scores, ScoreNullRun(run, observed.Bins)...)
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		raw, err := WriteNullScores(scores)
		if err != nil {
			t.Fatal(err)
		}
		back, err := ReadNullScores(bytes.NewReader(raw), "block.csv")
		if err != nil {
			t.Fatal(err)
		}
		all = append(all, back...)
	}
	got, err := AssembleNulls(observed, all, pc.Count)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("assembled nulls differ from PermutationTest's:\ngot  %+v\nwant %+v", got, want)
	}

	// A missing or repeated permutation is an error naming it.
	if _, err := AssembleNulls(observed, all[1:], pc.Count); err == nil || !strings.Contains(err.Error(), "no scores for permutation") {
		t.Errorf("a missing permutation: %v", err)
	}
	if _, err := AssembleNulls(observed, append(slices.Clone(all), all[0]), pc.Count); err == nil || !strings.Contains(err.Error(), "appears twice") {
		t.Errorf("a repeated permutation: %v", err)
	}
}

func TestNullScoresRoundTrip(t *testing.T) {
	in := []NullScores{{Model: "m,1", Target: "t", Permutation: 3, Scores: Scores{N: 5, Missing: 1, Bins: 10}}}
	for _, m := range Metrics() {
		in[0].Set(m, 0.1+1/3.0)
	}
	in[0].NMI = math.NaN()
	raw, err := WriteNullScores(in)
	if err != nil {
		t.Fatal(err)
	}
	out, err := ReadNullScores(bytes.NewReader(raw), "x.csv")
	if err != nil || len(out) != 1 || out[0].Pearson != in[0].Pearson || !math.IsNaN(out[0].NMI) || out[0].Model != "m,1" || out[0].N != 5 {
		t.Fatalf("round trip: %v, %+v", err, out)
	}
	bad := strings.Replace(string(raw), ",3,5,", ",three,5,", 1)
	if _, err := ReadNullScores(strings.NewReader(bad), "x.csv"); err == nil || !strings.Contains(err.Error(), "x.csv:2: column 3 (permutation)") {
		t.Errorf("bad permutation cell: %v", err)
	}
}
