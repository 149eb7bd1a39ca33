package eval

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"

	"github.com/skein-neuro/skein/data"
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

// ReadNullCSV reads what WriteNullCSV wrote: per model and target, the
// observed scores (permutation 0) and the scores of permutations 1, 2, …
// in order, with the permutation p-value of each metric. A metric column
// may be absent (a file of an older skein, before the metric existed): its
// values and p-values are then NaN. Scores carry metric values only (N,
// Missing and Bins are not in the file). A bad cell or a permutation out of
// order is a *data.FileError naming name, the line and the column.
func ReadNullCSV(r io.Reader, name string) ([]NullDistribution, error) {
	cr := csv.NewReader(r)
	col, err := readHeader(cr, name, []string{"model", "target", "permutation"})
	if err != nil {
		return nil, err
	}
	var out []NullDistribution
	index := make(map[[2]string]int)
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvError(name, err)
		}
		line, _ := cr.FieldPos(0)
		bad := func(column string, err error) error {
			return &data.FileError{Path: name, Line: line, Column: col[column] + 1, ColumnName: column, Err: err}
		}
		key := [2]string{rec[col["model"]], rec[col["target"]]}
		k, err := strconv.Atoi(rec[col["permutation"]])
		if err != nil || k < 0 {
			return nil, bad("permutation", fmt.Errorf("want a whole number ≥ 0, found %q", rec[col["permutation"]]))
		}
		var s Scores
		s.NMIChance = math.NaN()
		for _, m := range Metrics() {
			c, ok := col[string(m)]
			if !ok {
				s.Set(m, math.NaN())
				continue
			}
			v, err := strconv.ParseFloat(rec[c], 64)
			if err != nil {
				return nil, bad(string(m), fmt.Errorf("want a number or NaN, found %q", rec[c]))
			}
			s.Set(m, v)
		}
		j, seen := index[key]
		switch {
		case !seen && k != 0:
			return nil, bad("permutation", fmt.Errorf("model %q, target %q starts at permutation %d, want 0 (the observed run)", key[0], key[1], k))
		case !seen:
			index[key] = len(out)
			out = append(out, NullDistribution{Model: key[0], Target: key[1], Observed: s})
		case k != len(out[j].Null)+1:
			return nil, bad("permutation", fmt.Errorf("model %q, target %q: permutation %d, want %d", key[0], key[1], k, len(out[j].Null)+1))
		default:
			out[j].Null = append(out[j].Null, s)
		}
	}
	for i := range out {
		nd := &out[i]
		for _, m := range Metrics() {
			values := make([]float64, len(nd.Null))
			for k, s := range nd.Null {
				values[k] = s.Get(m)
			}
			nd.P.Set(m, PermutationPValue(nd.Observed.Get(m), values, m.LowerIsBetter()))
		}
	}
	return out, nil
}
