package eval

import (
	"encoding/csv"
	"fmt"
	"io"
	"strconv"

	"github.com/skein-neuro/skein/data"
)

// NullScores are one model's pooled scores on one target under one
// permutation of the scores: one value of a NullDistribution. A
// permutation test run in blocks (skein plan) writes them per block and
// assembles them with AssembleNulls.
type NullScores struct {
	Model, Target string
	Permutation   int // index into the permutations, from 0
	Scores
}

// ScoreNull scores one model's cross-validated predictions under
// permutation k as a permutation test does: pooled over all test
// predictions, per target, in target order, with bins equal-frequency
// bins for NMI and AMI.
func ScoreNull(predictions []Prediction, k, bins int) []NullScores {
	var out []NullScores
	for _, g := range Summarize(predictions, bins, false).Groups {
		out = append(out, NullScores{Model: g.Model, Target: g.Target, Permutation: k, Scores: g.Pooled})
	}
	return out
}

// nullColumns are the columns of WriteNullScores.
func nullColumns() []string {
	cols := []string{"model", "target", "permutation", "n", "missing", "bins"}
	for _, m := range Metrics() {
		cols = append(cols, string(m))
	}
	return append(cols, "nmi_chance")
}

// WriteNullScores writes rows as CSV: model, target, permutation (from 0),
// n, missing, bins, then one column per metric of Metrics and nmi_chance,
// each float in the shortest form that reads back to the same float64 (NaN
// for an undefined value).
func WriteNullScores(out io.Writer, rows []NullScores) error {
	w := csv.NewWriter(out)
	w.Write(nullColumns())
	for _, r := range rows {
		rec := []string{r.Model, r.Target, strconv.Itoa(r.Permutation), strconv.Itoa(r.N), strconv.Itoa(r.Missing), strconv.Itoa(r.Bins)}
		for _, m := range Metrics() {
			rec = append(rec, strconv.FormatFloat(r.Get(m), 'g', -1, 64))
		}
		rec = append(rec, strconv.FormatFloat(r.NMIChance, 'g', -1, 64))
		w.Write(rec)
	}
	w.Flush()
	return w.Error()
}

// ReadNullScores reads what WriteNullScores wrote. A bad cell is a
// *data.FileError naming name, the line and the column.
func ReadNullScores(r io.Reader, name string) ([]NullScores, error) {
	cr := csv.NewReader(r)
	want := nullColumns()
	if err := readExactHeader(cr, name, want); err != nil {
		return nil, err
	}
	var rows []NullScores
	for line := 2; ; line++ {
		rec, err := cr.Read()
		if err == io.EOF {
			return rows, nil
		}
		if err != nil {
			return nil, csvError(name, err)
		}
		row := NullScores{Model: rec[0], Target: rec[1]}
		for c, dst := range []*int{&row.Permutation, &row.N, &row.Missing, &row.Bins} {
			v, err := strconv.Atoi(rec[2+c])
			if err != nil || v < 0 {
				return nil, &data.FileError{Path: name, Line: line, Column: 3 + c, ColumnName: want[2+c], Err: fmt.Errorf("want a whole number ≥ 0, found %q", rec[2+c])}
			}
			*dst = v
		}
		for c, dst := range append(row.Values.fields(), &row.NMIChance) {
			v, err := strconv.ParseFloat(rec[6+c], 64)
			if err != nil {
				return nil, &data.FileError{Path: name, Line: line, Column: 7 + c, ColumnName: want[6+c], Err: fmt.Errorf("want a number or NaN, found %q", rec[6+c])}
			}
			*dst = v
		}
		rows = append(rows, row)
	}
}

// AssembleNulls builds the null distributions of a permutation test run in
// blocks, the same (same order, same numbers) as PermutationTest's on one
// machine: for each group of observed, in its order, whose model has null
// scores, the scores of permutations 0 to count-1 and the p-values. Every
// model with null scores must have every permutation of every target of
// its groups exactly once, scored with the bins of observed.
func AssembleNulls(observed *Summary, rows []NullScores, count int) ([]NullDistribution, error) {
	byKey := make(map[[2]string][]*Scores)
	tested := make(map[string]bool)
	for i := range rows {
		r := &rows[i]
		if r.Bins != observed.Bins {
			return nil, fmt.Errorf("model %q, target %q, permutation %d: NMI scored with %d bins, the run uses %d", r.Model, r.Target, r.Permutation, r.Bins, observed.Bins)
		}
		if r.Permutation < 0 || r.Permutation >= count {
			return nil, fmt.Errorf("model %q, target %q: permutation %d is outside 0 to %d", r.Model, r.Target, r.Permutation, count-1)
		}
		key := [2]string{r.Model, r.Target}
		if byKey[key] == nil {
			byKey[key] = make([]*Scores, count)
		}
		if byKey[key][r.Permutation] != nil {
			return nil, fmt.Errorf("model %q, target %q: permutation %d appears twice", r.Model, r.Target, r.Permutation)
		}
		byKey[key][r.Permutation] = &r.Scores
		tested[r.Model] = true
	}
	var out []NullDistribution
	for _, g := range observed.Groups {
		if !tested[g.Model] {
			continue
		}
		got := byKey[[2]string{g.Model, g.Target}]
		nd := NullDistribution{Model: g.Model, Target: g.Target, Observed: g.Pooled, Null: make([]Scores, count)}
		for k := range count {
			if got == nil || got[k] == nil {
				return nil, fmt.Errorf("model %q, target %q: no scores for permutation %d", g.Model, g.Target, k)
			}
			nd.Null[k] = *got[k]
		}
		for _, m := range Metrics() {
			values := make([]float64, count)
			for k, s := range nd.Null {
				values[k] = s.Get(m)
			}
			nd.P.Set(m, PermutationPValue(g.Pooled.Get(m), values, m.LowerIsBetter()))
		}
		out = append(out, nd)
	}
	return out, nil
}
