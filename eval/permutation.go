package eval

import (
	"bytes"
	"context"
	"encoding/csv"
	"strconv"

	"github.com/skein-neuro/skein/train"
)

// PermutationFile is the file of a run folder that holds the null
// distributions of the permutation test.
const PermutationFile = "permutations.csv"

// A NullDistribution is one model's pooled scores on one target under
// every permutation of the scores, with the observed scores and the
// permutation p-value of each metric.
type NullDistribution struct {
	Model, Target string
	Observed      Scores
	// Null holds the pooled scores of each permutation, in permutation
	// order.
	Null []Scores
	// P holds the permutation p-value of each metric (PermutationPValue).
	P Values
}

// PermutationTest runs the permutation test of the experiment of r:
// the whole cross-validation repeated under each of exp.Permutation.Count
// permutations of the participants' rows (scores and covariates together,
// train.Permutation), and scored as the observed run was, pooled
// over all test predictions. observed is the summary of the observed run.
// The result is ordered as observed.Groups.
func PermutationTest(ctx context.Context, r *train.Runner, observed *Summary) ([]NullDistribution, error) {
	exp := r.Experiment
	pc := exp.Permutation
	perms := train.Permutations(len(r.Cohort.Participants), train.Groups(r.Cohort), pc.Blocks, pc.Count, uint64(exp.Seed))
	nulls := make(map[[2]string][]Scores)
	err := r.RunPermutations(ctx, perms, pc.Models, pc.Chunk, func(run train.NullRun) error {
		for _, g := range Summarize(run.Predictions, observed.Bins, false).Groups {
			key := [2]string{g.Model, g.Target}
			nulls[key] = append(nulls[key], g.Pooled)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	var out []NullDistribution
	for _, g := range observed.Groups {
		null, ok := nulls[[2]string{g.Model, g.Target}]
		if !ok {
			continue
		}
		nd := NullDistribution{Model: g.Model, Target: g.Target, Observed: g.Pooled, Null: null}
		for _, m := range Metrics() {
			values := make([]float64, len(null))
			for k, s := range null {
				values[k] = s.Get(m)
			}
			nd.P.Set(m, PermutationPValue(g.Pooled.Get(m), values, m.LowerIsBetter()))
		}
		out = append(out, nd)
	}
	return out, nil
}

// WriteNullCSV writes null distributions as CSV: one line per model,
// target and permutation (numbered from 1; permutation 0 is the observed
// run), one column per metric.
func WriteNullCSV(nulls []NullDistribution) ([]byte, error) {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	header := []string{"model", "target", "permutation"}
	for _, m := range Metrics() {
		header = append(header, string(m))
	}
	w.Write(header)
	row := func(nd NullDistribution, k int, s Scores) {
		rec := []string{nd.Model, nd.Target, strconv.Itoa(k)}
		for _, m := range Metrics() {
			rec = append(rec, strconv.FormatFloat(s.Get(m), 'g', -1, 64))
		}
		w.Write(rec)
	}
	for _, nd := range nulls {
		row(nd, 0, nd.Observed)
		for k, s := range nd.Null {
			row(nd, k+1, s)
		}
	}
	w.Flush()
	return buf.Bytes(), w.Error()
}
