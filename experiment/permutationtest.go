package experiment

import (
	"context"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/train"
)

// PermutationTest runs the permutation test pc of the run of r: the whole
// cross-validation repeated under each of pc.Count permutations of the
// participants' rows (scores, labels and covariates together, see
// Permutation),
// each scored as the observed run was, pooled over all test predictions.
// observed is the summary of the observed run; the result is ordered as
// observed.Groups and equals that of running the test in blocks
// (PermutationBlock) and assembling them (eval.AssembleNulls).
func PermutationTest(ctx context.Context, r *train.Runner, pc Permutation, observed *eval.Summary) ([]eval.NullDistribution, error) {
	nulls, _, err := permutationTest(ctx, r, pc, observed)
	return nulls, err
}

// permutationTest is PermutationTest that also returns the AUC within folds of
// every model × class label under each permutation (the labels are
// permuted with the scores, and the classifiers refitted).
func permutationTest(ctx context.Context, r *train.Runner, pc Permutation, observed *eval.Summary) ([]eval.NullDistribution, []eval.ClassNull, error) {
	rows, classRows, err := PermutationBlock(ctx, r, pc, pc.Models, 0, pc.Count, observed.Bins)
	if err != nil {
		return nil, nil, err
	}
	nulls, err := eval.AssembleNulls(observed, rows, pc.Count)
	return nulls, classRows, err
}

// PermutationBlock runs permutations first to end−1 of the permutation
// test pc for the named models (all when names is empty) and returns their
// pooled scores, bins equal-frequency bins for NMI and AMI, and the AUC
// within folds of their class labels (eval.ScoreClassNull): one block of a test
// spread over batch units.
func PermutationBlock(ctx context.Context, r *train.Runner, pc Permutation, names []string, first, end, bins int) ([]eval.NullScores, []eval.ClassNull, error) {
	perms := train.Permutations(len(r.Cohort.Participants), train.Groups(r.Cohort), pc.Blocks, pc.Count, uint64(r.Design.Seed))
	var rows []eval.NullScores
	var classRows []eval.ClassNull
	err := r.RunPermutations(ctx, perms[first:end], names, *pc.Chunk, func(run train.NullRun) error {
		rows = append(rows, eval.ScoreNull(run.Predictions, first+run.Permutation, bins)...)
		classRows = append(classRows, eval.ScoreClassNull(run.ClassPredictions, first+run.Permutation)...)
		return nil
	})
	return rows, classRows, err
}
