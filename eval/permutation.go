package eval

import (
	"encoding/csv"
	"io"
	"strconv"
)

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

// WriteNullCSV writes null distributions as CSV: one line per model,
// target and permutation (numbered from 1; permutation 0 is the observed
// run), one column per metric.
func WriteNullCSV(out io.Writer, nulls []NullDistribution) error {
	w := csv.NewWriter(out)
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
	return w.Error()
}
