package experiment

import (
	"context"
	"math"
	"testing"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

func nullRunner(t *testing.T, seed int64, perms int) (*Experiment, *train.Runner) {
	t.Helper()
	sc, err := synth.Generate(synth.Config{N: 60, P: 8, Seed: seed, Null: true, Targets: 1})
	if err != nil {
		t.Fatal(err)
	}
	if err := sc.Preprocess(data.Preprocess{}); err != nil {
		t.Fatal(err)
	}
	exp := &Experiment{
		Seed:        seed,
		CV:          train.CV{Folds: new(5), Repeats: new(1)},
		Models:      []train.ModelConfig{{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}}},
		Permutation: Permutation{Count: perms},
	}
	exp.SetDefaults()
	return exp, &train.Runner{Design: exp.Design(), Cohort: sc.Cohort, Jobs: 1}
}

// TestPermutationPValuesUniformUnderNull: on null cohorts the permutation
// p-value of pooled r is uniform on its grid (a permutation test is exact
// under exchangeability; Phipson & Smyth 2010). Checked with the
// Kolmogorov–Smirnov statistic over repeated seeds, with a loose bound
// (reject only at p < 0.001), since 24 p-values on a grid of 1/40 are
// a coarse sample.
func TestPermutationPValuesUniformUnderNull(t *testing.T) {
	if testing.Short() {
		t.Skip("-short: repeats 24 permutation tests")
	}
	var ps []float64
	for seed := int64(1); seed <= 24; seed++ {
		exp, r := nullRunner(t, seed, 39)
		res, err := r.Run(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		rows := res.Predictions
		nulls, err := PermutationTest(context.Background(), r, exp.Permutation, eval.Summarize(rows, 0, true))
		if err != nil {
			t.Fatal(err)
		}
		if len(nulls) != 1 || len(nulls[0].Null) != 39 {
			t.Fatalf("seed %d: %d null distributions", seed, len(nulls))
		}
		ps = append(ps, nulls[0].P.Pearson)
	}
	d, p := eval.KSUniform(ps)
	t.Logf("KS against uniform: D = %.3f, p = %.3f (p-values %v)", d, p, ps)
	if p < 0.001 {
		t.Errorf("permutation p-values on null cohorts are not uniform: KS D = %.3f, p = %.2g", d, p)
	}
}

// TestPermutationsRespectBlocks: "within" keeps every score inside its
// group; "whole" moves whole groups onto groups of the same size.
func TestPermutationsRespectBlocks(t *testing.T) {
	groups := []string{"a", "a", "b", "b", "c", "c", "c", "d", "d", "d", "e"}
	for _, perm := range train.Permutations(len(groups), groups, "within", 20, 1) {
		for i, j := range perm {
			if groups[i] != groups[j] {
				t.Fatalf("within: participant %d (group %s) got the score of %d (group %s)", i, groups[i], j, groups[j])
			}
		}
	}
	for _, perm := range train.Permutations(len(groups), groups, "whole", 20, 1) {
		source := make(map[string]string) // group -> group it took its scores from
		for i, j := range perm {
			if s, ok := source[groups[i]]; ok && s != groups[j] {
				t.Fatalf("whole: group %s took scores from both %s and %s", groups[i], s, groups[j])
			}
			source[groups[i]] = groups[j]
		}
		if source["e"] != "e" {
			t.Fatalf("whole: the only group of size 1 took scores from %s", source["e"])
		}
	}
}

// TestPermutationChunksMatchRefits: fitting permutations as extra columns
// of one ridge run gives the same null distribution as one run per
// permutation.
func TestPermutationChunksMatchRefits(t *testing.T) {
	var nulls [2][]eval.NullDistribution
	for k, chunk := range []int{1, 8} {
		exp, r := nullRunner(t, 3, 8)
		exp.Permutation.Chunk = new(chunk)
		res, err := r.Run(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		rows := res.Predictions
		if nulls[k], err = PermutationTest(context.Background(), r, exp.Permutation, eval.Summarize(rows, 0, true)); err != nil {
			t.Fatal(err)
		}
	}
	for i := range nulls[0][0].Null {
		a, b := nulls[0][0].Null[i].Pearson, nulls[1][0].Null[i].Pearson
		if math.Abs(a-b) > 1e-9 {
			t.Fatalf("permutation %d: r = %v refitted, %v as an extra column", i+1, a, b)
		}
	}
}
