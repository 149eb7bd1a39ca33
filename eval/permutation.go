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

// A ClassNullDistribution is one model's AUC within folds (the headline
// AUC, AUCWithinFolds) on one class label under every permutation of the
// labels, with the observed AUC within folds and its permutation p-value:
// the counterpart of NullDistribution for a categorical target
// (ClassGroup.NullAUC and PAUC).
type ClassNullDistribution struct {
	Model, Label string
	Observed     float64
	// Null holds the AUC within folds of each permutation, in permutation
	// order.
	Null []float64
	// P is the permutation p-value of the observed AUC within folds
	// (PermutationPValue, higher is better).
	P float64
}

// ClassNulls returns the null distributions of AUC within folds of the groups that
// have one (ClassGroup.NullAUC, set by AssembleClassNulls), in the order
// of groups; nil when none has.
func ClassNulls(groups []ClassGroup) []ClassNullDistribution {
	var out []ClassNullDistribution
	for _, g := range groups {
		if g.NullAUC != nil {
			out = append(out, ClassNullDistribution{Model: g.Model, Label: g.Label, Observed: g.Pooled.AUCWithin, Null: g.NullAUC, P: g.PAUC})
		}
	}
	return out
}

// nullAUCColumn is the column of WriteNullCSV holding a class label's AUC
// within folds.
const nullAUCColumn = string(MetricAUCWithin)

// WriteNullCSV writes null distributions as CSV: one line per model,
// target and permutation (numbered from 1; permutation 0 is the observed
// run), one column per metric. When labels is not empty, the header gains
// a last column auc_within and each class label's null distribution of
// AUC within folds follows the scores' lines, in the order of labels: its
// lines name the label in the column target, leave the score metrics'
// cells empty and hold the AUC within folds in auc_within, which is empty
// on the scores' lines.
func WriteNullCSV(out io.Writer, nulls []NullDistribution, labels []ClassNullDistribution) error {
	w := csv.NewWriter(out)
	header := []string{"model", "target", "permutation"}
	for _, m := range Metrics() {
		header = append(header, string(m))
	}
	if len(labels) > 0 {
		header = append(header, nullAUCColumn)
	}
	w.Write(header)
	row := func(nd NullDistribution, k int, s Scores) {
		rec := []string{nd.Model, nd.Target, strconv.Itoa(k)}
		for _, m := range Metrics() {
			rec = append(rec, strconv.FormatFloat(s.Get(m), 'g', -1, 64))
		}
		if len(labels) > 0 {
			rec = append(rec, "")
		}
		w.Write(rec)
	}
	for _, nd := range nulls {
		row(nd, 0, nd.Observed)
		for k, s := range nd.Null {
			row(nd, k+1, s)
		}
	}
	blank := make([]string, len(Metrics()))
	for _, cd := range labels {
		for k, auc := range append([]float64{cd.Observed}, cd.Null...) {
			rec := append([]string{cd.Model, cd.Label, strconv.Itoa(k)}, blank...)
			w.Write(append(rec, strconv.FormatFloat(auc, 'g', -1, 64)))
		}
	}
	w.Flush()
	return w.Error()
}

// ReadNullCSV reads what WriteNullCSV wrote: per model and target, the
// observed scores (permutation 0) and the scores of permutations 1, 2, …
// in order, with the permutation p-value of each metric, and likewise per
// model and class label (the lines with an auc_within cell) the observed
// AUC within folds and that of each permutation, with its p-value. A
// metric column may be absent (a file of an older skein, before the metric
// existed): its values and p-values are then NaN. A file with a column auc
// and none auc_within holds the pooled AUC of an older skein's labels,
// which is not comparable; it is an error. Scores carry metric values only (N, Missing
// and Bins are not in the file). A bad cell or a permutation out of order
// is a *data.FileError naming name, the line and the column.
func ReadNullCSV(r io.Reader, name string) ([]NullDistribution, []ClassNullDistribution, error) {
	cr := csv.NewReader(r)
	col, err := readHeader(cr, name, []string{"model", "target", "permutation"})
	if err != nil {
		return nil, nil, err
	}
	aucCol, hasAUC := col[nullAUCColumn]
	if _, old := col[string(MetricAUC)]; old && !hasAUC {
		return nil, nil, &data.FileError{Path: name, Line: 1, Column: col[string(MetricAUC)] + 1, ColumnName: string(MetricAUC),
			Err: fmt.Errorf("the pooled AUC of an older skein, where %s is expected; evaluate the run again", nullAUCColumn)}
	}
	var out []NullDistribution
	var labels []ClassNullDistribution
	index := make(map[[2]string]int)
	labelIndex := make(map[[2]string]int)
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, nil, csvError(name, err)
		}
		line, _ := cr.FieldPos(0)
		bad := func(column string, err error) error {
			return &data.FileError{Path: name, Line: line, Column: col[column] + 1, ColumnName: column, Err: err}
		}
		key := [2]string{rec[col["model"]], rec[col["target"]]}
		k, err := strconv.Atoi(rec[col["permutation"]])
		if err != nil || k < 0 {
			return nil, nil, bad("permutation", fmt.Errorf("want a whole number ≥ 0, found %q", rec[col["permutation"]]))
		}
		// inOrder checks that permutation k comes next for key, whose
		// distribution holds have permutations so far (seen: any).
		inOrder := func(what string, seen bool, have int) error {
			switch {
			case !seen && k != 0:
				return bad("permutation", fmt.Errorf("model %q, %s %q starts at permutation %d, want 0 (the observed run)", key[0], what, key[1], k))
			case seen && k != have+1:
				return bad("permutation", fmt.Errorf("model %q, %s %q: permutation %d, want %d", key[0], what, key[1], k, have+1))
			}
			return nil
		}
		if hasAUC && rec[aucCol] != "" {
			auc, err := strconv.ParseFloat(rec[aucCol], 64)
			if err != nil {
				return nil, nil, bad(nullAUCColumn, fmt.Errorf("want a number or NaN, found %q", rec[aucCol]))
			}
			j, seen := labelIndex[key]
			have := 0
			if seen {
				have = len(labels[j].Null)
			}
			if err := inOrder("label", seen, have); err != nil {
				return nil, nil, err
			}
			if !seen {
				labelIndex[key] = len(labels)
				labels = append(labels, ClassNullDistribution{Model: key[0], Label: key[1], Observed: auc})
			} else {
				labels[j].Null = append(labels[j].Null, auc)
			}
			continue
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
				return nil, nil, bad(string(m), fmt.Errorf("want a number or NaN, found %q", rec[c]))
			}
			s.Set(m, v)
		}
		j, seen := index[key]
		have := 0
		if seen {
			have = len(out[j].Null)
		}
		if err := inOrder("target", seen, have); err != nil {
			return nil, nil, err
		}
		if !seen {
			index[key] = len(out)
			out = append(out, NullDistribution{Model: key[0], Target: key[1], Observed: s})
		} else {
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
	for i := range labels {
		labels[i].P = PermutationPValue(labels[i].Observed, labels[i].Null, false)
	}
	return out, labels, nil
}
