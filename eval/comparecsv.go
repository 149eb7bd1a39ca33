package eval

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"

	"github.com/skein-neuro/skein/data"
)

// comparisonColumns are the columns of WriteComparisonCSV, in order.
var comparisonColumns = []string{
	"model", "target", "baseline", "reference", "is_reference",
	"r_within", "r_lower", "r_upper", "mae", "mae_lower", "mae_upper", "level", "resamples",
	"p_r_within", "p_mae",
	"diff_r", "diff_r_t", "diff_r_df", "diff_r_p", "diff_mae", "diff_mae_t", "diff_mae_df", "diff_mae_p",
	"folds_tested", "repeated_folds",
}

// WriteComparisonCSV writes comps as CSV, one line per model and target in
// the order of comps, with the columns
//
//	model,target,baseline,reference,is_reference,
//	r_within,r_lower,r_upper,mae,mae_lower,mae_upper,level,resamples,
//	p_r_within,p_mae,
//	diff_r,diff_r_t,diff_r_df,diff_r_p,diff_mae,diff_mae_t,diff_mae_df,diff_mae_p,
//	folds_tested,repeated_folds
//
// baseline and is_reference are 0 or 1; reference names the reference
// baseline the model is compared with ("" for the reference itself);
// r_within and mae are the pooled values with their bootstrap interval
// (R and MAE) at level over resamples; p_r_within and p_mae the
// permutation p-values; diff_* the corrected resampled t-tests of the
// difference from the reference (DiffR and DiffMAE) over folds_tested
// distinct folds. An undefined number (NaN, or no permutation test, or
// no reference) is an empty cell.
func WriteComparisonCSV(w io.Writer, comps []Comparison) error {
	cw := csv.NewWriter(w)
	cw.Write(comparisonColumns)
	flag := map[bool]string{false: "0", true: "1"}
	for _, c := range comps {
		pr, pm := math.NaN(), math.NaN()
		if c.P != nil {
			pr, pm = c.P.PearsonWithin, c.P.MAE
		}
		row := []string{c.Model, c.Target, flag[c.Baseline], c.Reference, flag[c.IsReference],
			cell(c.R.Estimate), cell(c.R.Lower), cell(c.R.Upper),
			cell(c.MAE.Estimate), cell(c.MAE.Lower), cell(c.MAE.Upper),
			cell(c.R.Level), strconv.Itoa(c.R.Resamples),
			cell(pr), cell(pm)}
		if c.Reference != "" {
			row = append(row, cell(c.DiffR.MeanDiff), cell(c.DiffR.T), cell(c.DiffR.DF), cell(c.DiffR.P),
				cell(c.DiffMAE.MeanDiff), cell(c.DiffMAE.T), cell(c.DiffMAE.DF), cell(c.DiffMAE.P),
				strconv.Itoa(c.DiffR.J))
		} else {
			row = append(row, "", "", "", "", "", "", "", "", "")
		}
		row = append(row, strconv.Itoa(c.RepeatedFolds))
		cw.Write(row)
	}
	cw.Flush()
	return cw.Error()
}

// cell formats x for a CSV cell, empty for NaN.
func cell(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// ReadComparisonCSV reads the comparison table WriteComparisonCSV wrote;
// name is the file's name for errors. The Comparisons it returns have no
// Group (metrics.json holds the groups); P is nil when both p-values are
// empty, and DiffR and DiffMAE are NaN where their cells are empty. A
// missing column or a malformed cell is an error naming the file, line
// and column.
func ReadComparisonCSV(r io.Reader, name string) ([]Comparison, error) {
	cr := csv.NewReader(r)
	col, err := readHeader(cr, name, comparisonColumns)
	if err != nil {
		return nil, err
	}
	var out []Comparison
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvError(name, err)
		}
		line, _ := cr.FieldPos(0)
		var bad error
		num := func(column string) float64 {
			s := rec[col[column]]
			if s == "" || bad != nil {
				return math.NaN()
			}
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				bad = &data.FileError{Path: name, Line: line, Column: col[column] + 1, ColumnName: column,
					Err: fmt.Errorf("want a number or an empty cell, found %q", s)}
			}
			return v
		}
		whole := func(column string) int {
			s := rec[col[column]]
			if s == "" || bad != nil {
				return 0
			}
			v, err := strconv.Atoi(s)
			if err != nil || v < 0 {
				bad = &data.FileError{Path: name, Line: line, Column: col[column] + 1, ColumnName: column,
					Err: fmt.Errorf("want a whole number ≥ 0, found %q", s)}
			}
			return v
		}
		flag := func(column string) bool {
			switch s := rec[col[column]]; s {
			case "0":
			case "1":
				return true
			default:
				if bad == nil {
					bad = &data.FileError{Path: name, Line: line, Column: col[column] + 1, ColumnName: column,
						Err: fmt.Errorf("want 0 or 1, found %q", s)}
				}
			}
			return false
		}
		c := Comparison{Model: rec[col["model"]], Target: rec[col["target"]], Baseline: flag("baseline"),
			Reference: rec[col["reference"]], IsReference: flag("is_reference")}
		level, resamples := num("level"), whole("resamples")
		c.R = Interval{Estimate: num("r_within"), Lower: num("r_lower"), Upper: num("r_upper"), Level: level, Resamples: resamples}
		c.MAE = Interval{Estimate: num("mae"), Lower: num("mae_lower"), Upper: num("mae_upper"), Level: level, Resamples: resamples}
		if pr, pm := num("p_r_within"), num("p_mae"); !math.IsNaN(pr) || !math.IsNaN(pm) {
			c.P = new(Values)
			for _, m := range Metrics() {
				c.P.Set(m, math.NaN())
			}
			c.P.PearsonWithin, c.P.MAE = pr, pm
		}
		folds := whole("folds_tested")
		c.DiffR = TTest{J: folds, MeanDiff: num("diff_r"), T: num("diff_r_t"), DF: num("diff_r_df"), P: num("diff_r_p")}
		c.DiffMAE = TTest{J: folds, MeanDiff: num("diff_mae"), T: num("diff_mae_t"), DF: num("diff_mae_df"), P: num("diff_mae_p")}
		c.RepeatedFolds = whole("repeated_folds")
		if bad != nil {
			return nil, bad
		}
		out = append(out, c)
	}
	return out, nil
}
