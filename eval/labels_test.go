package eval

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"reflect"
	"strings"
	"testing"
)

// labelsFixture is testdata/eval/labels.json, made by make_labels.py
// (scikit-learn 1.2, numpy 1.24, scipy 1.10).
type labelsFixture struct {
	Rows []struct {
		ID       string  `json:"id"`
		Model    string  `json:"model"`
		Repeat   int     `json:"repeat"`
		Fold     int     `json:"fold"`
		Observed int     `json:"observed"`
		P1       float64 `json:"p1"`
	} `json:"rows"`
	Pooled      map[string]map[string]float64 `json:"pooled"`
	FoldAUC     map[string][]float64          `json:"fold_auc"`
	FoldMeanAUC map[string]float64            `json:"fold_mean_auc"`
	FoldSDAUC   map[string]float64            `json:"fold_sd_auc"`
	TTest       struct {
		MeanDiff float64 `json:"mean_diff"`
		T        float64 `json:"t"`
		P        float64 `json:"p"`
		NTrain   float64 `json:"n_train"`
		NTest    float64 `json:"n_test"`
	} `json:"ttest"`
}

func readLabelsFixture(t *testing.T) ([]ClassPrediction, labelsFixture) {
	t.Helper()
	raw, err := os.ReadFile("../testdata/eval/labels.json")
	if err != nil {
		t.Fatal(err)
	}
	var fx labelsFixture
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	rows := make([]ClassPrediction, len(fx.Rows))
	for i, r := range fx.Rows {
		rows[i] = ClassPrediction{ParticipantID: r.ID, Model: r.Model, Label: "diagnosis", Repeat: r.Repeat, Fold: r.Fold,
			Observed: r.Observed, Probabilities: []float64{1 - r.P1, r.P1}}
	}
	return rows, fx
}

var diagnosisClasses = map[string][]string{"diagnosis": {"control", "patient"}}

// TestSummarizeClasses: pooled metrics, fold AUC and their mean and SD,
// and the corrected t-test of fold AUC against the reference, against
// scikit-learn 1.2, numpy and scipy (testdata/eval/make_labels.py).
func TestSummarizeClasses(t *testing.T) {
	rows, fx := readLabelsFixture(t)
	groups := SummarizeClasses(rows, diagnosisClasses, 0.5)
	if len(groups) != 2 || groups[0].Model != "net" || groups[1].Model != "constant" {
		t.Fatalf("groups %+v, want net then constant", groups)
	}
	CompareClasses(groups, rows, CompareClassOptions{Reference: map[string]string{"diagnosis": "constant"},
		NTrain: fx.TTest.NTrain, NTest: fx.TTest.NTest, Resamples: 200, Seed: 1})
	near := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-12 {
			t.Errorf("%s = %v, want %v", what, got, want)
		}
	}
	for _, g := range groups {
		for _, m := range ClassMetrics() {
			near(g.Model+" pooled "+string(m), g.Pooled.Get(m), fx.Pooled[g.Model][string(m)])
		}
		if g.N != 24 || len(g.Folds) != 4 {
			t.Errorf("%s: n %d, %d folds; want 24 and 4", g.Model, g.N, len(g.Folds))
		}
		for k, f := range g.Folds {
			near(g.Model+" fold AUC", f.AUC, fx.FoldAUC[g.Model][k])
		}
		near(g.Model+" fold mean AUC", g.FoldMean.AUC, fx.FoldMeanAUC[g.Model])
		near(g.Model+" fold SD AUC", g.FoldSD.AUC, fx.FoldSDAUC[g.Model])
		for _, m := range []ClassMetric{MetricAUCWithin, MetricAUC} {
			iv := g.Intervals[m]
			if iv.Resamples != 200 || iv.Estimate != g.Pooled.Get(m) || !(iv.Lower <= iv.Estimate && iv.Estimate <= iv.Upper) {
				t.Errorf("%s: %s interval %+v around %v", g.Model, m, iv, g.Pooled.Get(m))
			}
		}
		// The constant predictor ties every pair: 0.5 in every resample.
		if iv := g.Intervals[MetricAUCWithin]; g.Model == "constant" && (iv.Lower != 0.5 || iv.Upper != 0.5) {
			t.Errorf("constant: AUC within folds interval %+v, want 0.5 to 0.5", iv)
		}
	}
	net, ref := groups[0], groups[1]
	if net.Reference != "constant" || !ref.IsReference || ref.Reference != "" {
		t.Fatalf("references: net %q, constant is reference %v", net.Reference, ref.IsReference)
	}
	near("ΔAUC", net.DiffAUC.MeanDiff, fx.TTest.MeanDiff)
	near("t", net.DiffAUC.T, fx.TTest.T)
	if math.Abs(net.DiffAUC.P-fx.TTest.P) > 1e-9 {
		t.Errorf("p = %v, want %v (scipy)", net.DiffAUC.P, fx.TTest.P)
	}
}

// TestWriteClassPredictions: the layout of class_predictions.csv, one row
// per class, class names for observed and class, repeat and fold from 1,
// probabilities exact.
func TestWriteClassPredictions(t *testing.T) {
	tenth := 0.1
	rows := []ClassPrediction{
		{ParticipantID: "sub-01", Model: "net", Label: "diagnosis", Repeat: 0, Fold: 1, Observed: 1, Probabilities: []float64{1 - (tenth + 0.2), tenth + 0.2}},
		{ParticipantID: "sub-02", Model: "net", Label: "subtype", Repeat: 1, Fold: 0, Observed: 0, Probabilities: []float64{0.5, 0.25, 0.25}},
	}
	classes := map[string][]string{"diagnosis": {"control", "patient"}, "subtype": {"a", "b", "c"}}
	var buf bytes.Buffer
	if err := WriteClassPredictions(&buf, rows, classes); err != nil {
		t.Fatal(err)
	}
	want := `participant_id,model,target,repeat,fold,observed,class,probability
sub-01,net,diagnosis,1,2,patient,control,0.7
sub-01,net,diagnosis,1,2,patient,patient,0.30000000000000004
sub-02,net,subtype,2,1,a,a,0.5
sub-02,net,subtype,2,1,a,b,0.25
sub-02,net,subtype,2,1,a,c,0.25
`
	if buf.String() != want {
		t.Fatalf("got\n%s\nwant\n%s", buf.String(), want)
	}
	if err := WriteClassPredictions(&buf, rows, map[string][]string{"diagnosis": {"control", "patient"}}); err == nil || !strings.Contains(err.Error(), `"subtype"`) {
		t.Fatalf("a label without class names: %v", err)
	}
}

// TestClassNulls: the null AUC within folds assembled from blocks in any
// order equals that of one block, survives its CSV, and the p-value counts
// the observed AUC within folds among the permutations (Phipson & Smyth
// 2010).
func TestClassNulls(t *testing.T) {
	rows, _ := readLabelsFixture(t)
	groups := SummarizeClasses(rows, diagnosisClasses, 0.5)
	rng := rand.New(rand.NewPCG(3, 3))
	const count = 9
	var nulls []ClassNull
	for k := range count {
		perm := rng.Perm(12)
		shuffled := make([]ClassPrediction, len(rows))
		for i, r := range rows {
			r.Observed = rows[perm[i%12]].Observed
			shuffled[i] = r
		}
		nulls = append(nulls, ScoreClassNull(shuffled, k)...)
	}
	var buf bytes.Buffer
	if err := WriteClassNulls(&buf, nulls); err != nil {
		t.Fatal(err)
	}
	read, err := ReadClassNulls(&buf, "nulls.csv")
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(read, nulls) {
		t.Fatal("class nulls changed through their CSV")
	}
	reversed := make([]ClassNull, len(nulls))
	for i, n := range nulls {
		reversed[len(nulls)-1-i] = n
	}
	a, b := SummarizeClasses(rows, diagnosisClasses, 0.5), groups
	if err := AssembleClassNulls(a, nulls, count); err != nil {
		t.Fatal(err)
	}
	if err := AssembleClassNulls(b, reversed, count); err != nil {
		t.Fatal(err)
	}
	for i := range a {
		if !reflect.DeepEqual(a[i].NullAUC, b[i].NullAUC) || a[i].PAUC != b[i].PAUC {
			t.Fatalf("%s: assembled in another order gives %v, %v", a[i].Model, b[i].NullAUC, b[i].PAUC)
		}
		extreme := 1
		for _, v := range a[i].NullAUC {
			if v >= a[i].Pooled.AUCWithin {
				extreme++
			}
		}
		if want := float64(extreme) / (count + 1); a[i].PAUC != want {
			t.Errorf("%s: p = %v, want %v", a[i].Model, a[i].PAUC, want)
		}
	}
	if err := AssembleClassNulls(a, nulls[2:], count); err == nil {
		t.Fatal("a missing permutation was not reported")
	}
}

// TestClassGroupsJSON: the labels of metrics.json read back as written,
// NaN (the reference's undefined t-test, sensitivity of a constant) as
// null.
func TestClassGroupsJSON(t *testing.T) {
	rows, fx := readLabelsFixture(t)
	s := &Summary{Bins: 10, Labels: SummarizeClasses(rows, diagnosisClasses, 0.5)}
	CompareClasses(s.Labels, rows, CompareClassOptions{Reference: map[string]string{"diagnosis": "constant"},
		NTrain: fx.TTest.NTrain, NTest: fx.TTest.NTest, Resamples: 50, Seed: 2})
	if err := AssembleClassNulls(s.Labels, ScoreClassNull(rows, 0), 1); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := s.WriteJSON(&buf); err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{`"labels"`, `"auc_within"`, `"auc"`, `"balanced_accuracy"`, `"log_loss"`, `"brier"`, `"sensitivity"`, `"specificity"`, `"diff_auc"`, `"permutation_p_auc_within"`} {
		if !strings.Contains(buf.String(), key) {
			t.Errorf("metrics.json lacks %s", key)
		}
	}
	var back Summary
	if err := json.Unmarshal(buf.Bytes(), &back); err != nil {
		t.Fatal(err)
	}
	var again bytes.Buffer
	if err := back.WriteJSON(&again); err != nil {
		t.Fatal(err)
	}
	if again.String() != buf.String() {
		t.Fatalf("metrics.json changed when read back:\n%s\nwant\n%s", again.String(), buf.String())
	}
	var md bytes.Buffer
	if err := s.WriteMarkdown(&md); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"### diagnosis (class label)", "| net | 24 | 4 |", "| AUC within folds | pooled AUC |",
		"| 0.500 ± 0.000 [0.500] | 0.500 |", "reference", Disclaimer} {
		if !strings.Contains(md.String(), want) {
			t.Errorf("summary lacks %q:\n%s", want, md.String())
		}
	}
}
