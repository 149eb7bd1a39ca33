package eval

import (
	"bytes"
	"math"
	"reflect"
	"strings"
	"testing"
)

// TestComparisonCSVRoundTrip writes two comparisons, one the reference
// without a permutation test, and reads them back; the text is checked
// against a golden copy (the CSV layout of RFC 4180).
func TestComparisonCSVRoundTrip(t *testing.T) {
	nan := math.NaN()
	p := &Values{}
	for _, m := range Metrics() {
		p.Set(m, nan)
	}
	p.PearsonWithin, p.MAE = 0.005, 0.01
	comps := []Comparison{
		{Model: "ridge", Target: "recall", Baseline: true, IsReference: true,
			R:     Interval{Estimate: 0.3, Lower: 0.1, Upper: 0.45, Level: 0.95, Resamples: 1000},
			MAE:   Interval{Estimate: 4.5, Lower: 4, Upper: 5, Level: 0.95, Resamples: 1000},
			DiffR: TTest{MeanDiff: nan, T: nan, DF: nan, P: nan}, DiffMAE: TTest{MeanDiff: nan, T: nan, DF: nan, P: nan}},
		{Model: "net, \"fused\"", Target: "recall", Reference: "ridge", P: p,
			R:       Interval{Estimate: 0.41, Lower: 0.25, Upper: 0.55, Level: 0.95, Resamples: 1000},
			MAE:     Interval{Estimate: 4.2, Lower: 3.8, Upper: 4.7, Level: 0.95, Resamples: 1000},
			DiffR:   TTest{J: 10, MeanDiff: 0.11, T: 2.5, DF: 9, P: 0.034},
			DiffMAE: TTest{J: 10, MeanDiff: -0.3, T: -1.2, DF: 9, P: 0.26}, RepeatedFolds: 2},
	}
	var buf bytes.Buffer
	if err := WriteComparisonCSV(&buf, comps); err != nil {
		t.Fatal(err)
	}
	want := "model,target,baseline,reference,is_reference,r_within,r_lower,r_upper,mae,mae_lower,mae_upper,level,resamples,p_r_within,p_mae,diff_r,diff_r_t,diff_r_df,diff_r_p,diff_mae,diff_mae_t,diff_mae_df,diff_mae_p,folds_tested,repeated_folds\n" +
		"ridge,recall,1,,1,0.3,0.1,0.45,4.5,4,5,0.95,1000,,,,,,,,,,,,0\n" +
		"\"net, \"\"fused\"\"\",recall,0,ridge,0,0.41,0.25,0.55,4.2,3.8,4.7,0.95,1000,0.005,0.01,0.11,2.5,9,0.034,-0.3,-1.2,9,0.26,10,2\n"
	if buf.String() != want {
		t.Fatalf("CSV:\n%s\nwant:\n%s", buf.String(), want)
	}
	got, err := ReadComparisonCSV(strings.NewReader(want), "comparison.csv")
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 2 {
		t.Fatalf("%d rows, want 2", len(got))
	}
	if got[0].P != nil || !got[0].IsReference || !got[0].Baseline || !math.IsNaN(got[0].DiffR.P) {
		t.Errorf("reference row read back as %+v", got[0])
	}
	g := got[1]
	g.P, comps[1].P = nil, nil
	if !reflect.DeepEqual(g, comps[1]) {
		t.Errorf("read back\n%+v\nwant\n%+v", g, comps[1])
	}
	if got[1].P.PearsonWithin != 0.005 || got[1].P.MAE != 0.01 || !math.IsNaN(got[1].P.Pearson) {
		t.Errorf("p-values read back as %+v", got[1].P)
	}
}

func TestReadComparisonCSVErrors(t *testing.T) {
	header := strings.Join(comparisonColumns, ",") + "\n"
	row := func(baseline, r string) string {
		return "ridge,recall," + baseline + ",,1," + r + ",0.1,0.45,4.5,4,5,0.95,1000,,,,,,,,,,,,0\n"
	}
	tests := []struct{ name, text, want string }{
		{"empty", "", "comparison.csv: line 1: empty file"},
		{"no column", "model,target\n", `comparison.csv: line 1: no "baseline" column`},
		{"bad flag", header + row("yes", "0.3"), `comparison.csv: line 2, column 3 ("baseline"): want 0 or 1, found "yes"`},
		{"bad number", header + row("1", "high"), `comparison.csv: line 2, column 6 ("r_within"): want a number or an empty cell, found "high"`},
	}
	for _, tt := range tests {
		_, err := ReadComparisonCSV(strings.NewReader(tt.text), "comparison.csv")
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("%s: %v, want %q", tt.name, err, tt.want)
		}
	}
}
