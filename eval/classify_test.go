package eval

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The reference values in ../testdata/eval/classify.json are made by
// ../testdata/eval/make_classify.py with Debian's scikit-learn 1.2 and
// numpy 1.24; each check below names the function that made its values.
// Where skein differs from scikit-learn by convention (NaN for undefined
// metrics, the first ROC threshold), the script says so.

type classifyCase struct {
	Name      string      `json:"name"`
	Labels    []int       `json:"labels"`
	Proba     [][]float64 `json:"proba"`
	Threshold float64     `json:"threshold"`
	Want      struct {
		AUC              fnum    `json:"auc"`
		OVRAUC           fnum    `json:"ovr_auc"`
		BalancedAccuracy fnum    `json:"balanced_accuracy"`
		Accuracy         fnum    `json:"accuracy"`
		LogLoss          fnum    `json:"log_loss"`
		Brier            fnum    `json:"brier"`
		Sensitivity      fnum    `json:"sensitivity"`
		Specificity      fnum    `json:"specificity"`
		Predicted        []int   `json:"predicted"`
		Confusion        [][]int `json:"confusion"`
	} `json:"want"`
	ROC *struct {
		FPR        []fnum `json:"fpr"`
		TPR        []fnum `json:"tpr"`
		Thresholds []fnum `json:"thresholds"`
	} `json:"roc"`
	Calibration []struct {
		Bins          int    `json:"bins"`
		ObservedRate  []fnum `json:"observed_rate"`
		MeanPredicted []fnum `json:"mean_predicted"`
	} `json:"calibration"`
}

func (c classifyCase) proba() *mat.Dense {
	m := mat.NewDense(len(c.Proba), len(c.Proba[0]), nil)
	for i, row := range c.Proba {
		m.SetRow(i, row)
	}
	return m
}

// binary returns the rows whose label is not missing as positive (class 1)
// flags and the probability of class 1.
func (c classifyCase) binary() (positive []bool, p1 []float64) {
	for i, y := range c.Labels {
		if y < 0 {
			continue
		}
		positive = append(positive, y == 1)
		p1 = append(p1, c.Proba[i][1])
	}
	return positive, p1
}

func loadClassifyCases(t *testing.T) []classifyCase {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("..", "testdata", "eval", "classify.json"))
	if err != nil {
		t.Fatal(err)
	}
	var f struct {
		Cases []classifyCase `json:"cases"`
	}
	if err := json.Unmarshal(raw, &f); err != nil {
		t.Fatalf("classify.json: %v", err)
	}
	if len(f.Cases) == 0 {
		t.Fatal("classify.json: no cases")
	}
	return f.Cases
}

// classifyTol is the tolerance of every check against scikit-learn.
const classifyTol = 1e-12

// maxDiff records the largest difference from scikit-learn of each metric,
// logged at the end of a test (go test -v) for the record.
type maxDiff map[string]float64

func (d maxDiff) check(t *testing.T, what, metric string, got, want float64) {
	t.Helper()
	if !near(got, want, classifyTol) {
		t.Errorf("%s: %s = %.17g, want %.17g", what, metric, got, want)
		return
	}
	if !math.IsNaN(want) {
		d[metric] = math.Max(d[metric], math.Abs(got-want))
	}
}

func TestScoreClassesAgainstSklearn(t *testing.T) {
	diff := maxDiff{}
	for _, c := range loadClassifyCases(t) {
		proba := c.proba()
		got := ScoreClasses(c.Labels, proba, c.Threshold)
		w := c.Want
		// roc_auc_score (binary; multi_class="ovr", average="macro").
		diff.check(t, c.Name, "auc", got.AUC, float64(w.AUC))
		// balanced_accuracy_score.
		diff.check(t, c.Name, "balanced_accuracy", got.BalancedAccuracy, float64(w.BalancedAccuracy))
		// accuracy_score.
		diff.check(t, c.Name, "accuracy", got.Accuracy, float64(w.Accuracy))
		// log_loss(eps=1e-15).
		diff.check(t, c.Name, "log_loss", got.LogLoss, float64(w.LogLoss))
		// brier_score_loss (binary); numpy from Brier's formula (K > 2).
		diff.check(t, c.Name, "brier", got.Brier, float64(w.Brier))
		// recall_score with pos_label=1 and pos_label=0 (NaN by skein's
		// convention when the class is absent).
		diff.check(t, c.Name, "sensitivity", got.Sensitivity, float64(w.Sensitivity))
		diff.check(t, c.Name, "specificity", got.Specificity, float64(w.Specificity))

		// The same metrics from the separate functions.
		// roc_auc_score(multi_class="ovr", average="macro"), or for K = 2
		// the mean of roc_auc_score of each column.
		diff.check(t, c.Name, "ovr_auc", OneVsRestAUC(c.Labels, proba), float64(w.OVRAUC))
		diff.check(t, c.Name, "log_loss", LogLoss(c.Labels, proba), float64(w.LogLoss))
		diff.check(t, c.Name, "brier", Brier(c.Labels, proba), float64(w.Brier))

		// predicted classes: p1 >= threshold, or np.argmax.
		pred := PredictedClasses(proba, c.Threshold)
		if !equalInts(pred, w.Predicted) {
			t.Errorf("%s: predicted classes %v, want %v", c.Name, pred, w.Predicted)
		}
		_, k := proba.Dims()
		diff.check(t, c.Name, "balanced_accuracy", BalancedAccuracy(c.Labels, pred, k), float64(w.BalancedAccuracy))
		// confusion_matrix(labels=range(K)).
		cm := Confusion(c.Labels, pred, k)
		for i := range cm {
			if !equalInts(cm[i], w.Confusion[i]) {
				t.Errorf("%s: confusion matrix %v, want %v", c.Name, cm, w.Confusion)
				break
			}
		}
	}
	for m, d := range diff {
		t.Logf("largest difference from scikit-learn: %s %.3g", m, d)
	}
}

func TestROCAgainstSklearn(t *testing.T) {
	diff := maxDiff{}
	for _, c := range loadClassifyCases(t) {
		if c.ROC == nil {
			continue
		}
		positive, p1 := c.binary()
		// roc_auc_score.
		diff.check(t, c.Name, "auc", ROCAUC(positive, p1), float64(c.Want.AUC))
		// roc_curve(drop_intermediate=False); skein's first threshold is
		// +Inf where scikit-learn 1.2's is max(score) + 1.
		fpr, tpr, thr := ROCCurve(positive, p1)
		want := c.ROC
		if len(fpr) != len(want.FPR) || len(tpr) != len(want.TPR) || len(thr) != len(want.Thresholds) {
			t.Errorf("%s: ROC curve of %d points, want %d", c.Name, len(fpr), len(want.FPR))
			continue
		}
		if !math.IsInf(thr[0], 1) {
			t.Errorf("%s: first threshold %v, want +Inf", c.Name, thr[0])
		}
		for i := range fpr {
			diff.check(t, c.Name, "roc fpr", fpr[i], float64(want.FPR[i]))
			diff.check(t, c.Name, "roc tpr", tpr[i], float64(want.TPR[i]))
			if i > 0 {
				diff.check(t, c.Name, "roc thresholds", thr[i], float64(want.Thresholds[i]))
			}
		}
		// The AUC is the trapezoidal area under the curve (common
		// practice, no source), when both classes are present.
		if !math.IsNaN(float64(c.Want.AUC)) {
			var area float64
			for i := 1; i < len(fpr); i++ {
				area += (fpr[i] - fpr[i-1]) * (tpr[i] + tpr[i-1]) / 2
			}
			diff.check(t, c.Name, "auc (trapezoid)", area, float64(c.Want.AUC))
		}
	}
	for m, d := range diff {
		t.Logf("largest difference from scikit-learn: %s %.3g", m, d)
	}
}

func TestCalibrationAgainstSklearn(t *testing.T) {
	diff := maxDiff{}
	for _, c := range loadClassifyCases(t) {
		positive, p1 := c.binary()
		for _, want := range c.Calibration {
			// sklearn.calibration.calibration_curve(strategy="uniform").
			got := Calibration(positive, p1, want.Bins)
			if len(got) != len(want.ObservedRate) {
				t.Errorf("%s, %d bins: %d bins not empty, want %d", c.Name, want.Bins, len(got), len(want.ObservedRate))
				continue
			}
			var count int
			for i, b := range got {
				diff.check(t, c.Name, "calibration observed rate", b.ObservedRate, float64(want.ObservedRate[i]))
				diff.check(t, c.Name, "calibration mean predicted", b.MeanPredicted, float64(want.MeanPredicted[i]))
				if b.MeanPredicted < b.Low || b.MeanPredicted > b.High || !near(b.High-b.Low, 1/float64(want.Bins), 1e-15) {
					t.Errorf("%s, %d bins: bin [%v, %v] holds mean %v", c.Name, want.Bins, b.Low, b.High, b.MeanPredicted)
				}
				count += b.Count
			}
			if count != len(p1) {
				t.Errorf("%s, %d bins: bins count %d participants, want %d", c.Name, want.Bins, count, len(p1))
			}
		}
	}
	for m, d := range diff {
		t.Logf("largest difference from scikit-learn: %s %.3g", m, d)
	}
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func TestClassMetricsEdgeCases(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name    string
		got     float64
		want    float64
		wantNaN bool
	}{
		// A constant score ranks every pair as a tie: AUC 1/2 (the
		// Mann–Whitney convention, common practice, no source).
		{name: "constant score", got: ROCAUC([]bool{false, true, false, true}, []float64{0.3, 0.3, 0.3, 0.3}), want: 0.5},
		// A perfect and a reversed ranking.
		{name: "perfect", got: ROCAUC([]bool{false, false, true}, []float64{0.1, 0.2, 0.9}), want: 1},
		{name: "reversed", got: ROCAUC([]bool{true, false, false}, []float64{0.1, 0.2, 0.9}), want: 0},
		// A NaN score is skipped: the same as the ranking without it.
		{name: "NaN score", got: ROCAUC([]bool{false, true, true, false}, []float64{0.1, nan, 0.8, 0.2}), want: 1},
		// Only positives: no pair to rank.
		{name: "only positives", got: ROCAUC([]bool{true, true}, []float64{0.1, 0.8}), wantNaN: true},
		{name: "no rows", got: ROCAUC(nil, nil), wantNaN: true},
		// All labels missing.
		{name: "all missing log loss", got: LogLoss([]int{-1, -1}, mat.NewDense(2, 2, []float64{0.5, 0.5, 0.5, 0.5})), wantNaN: true},
		{name: "all missing balanced accuracy", got: BalancedAccuracy([]int{-1}, []int{0}, 2), wantNaN: true},
		// A certain, wrong prediction costs −log(1e-15) (the clipping
		// bound of the contract).
		{name: "log loss of p = 0", got: LogLoss([]int{1}, mat.NewDense(1, 2, []float64{1, 0})), want: -math.Log(1e-15)},
		{name: "log loss of p = 1", got: LogLoss([]int{1}, mat.NewDense(1, 2, []float64{0, 1})), want: -math.Log(1 - 1e-15)},
		// A NaN probability row is skipped.
		{name: "NaN row Brier", got: Brier([]int{1, 0}, mat.NewDense(2, 2, []float64{0.25, 0.75, nan, nan})), want: 0.0625},
	}
	for _, tt := range tests {
		if tt.wantNaN {
			if !math.IsNaN(tt.got) {
				t.Errorf("%s: %v, want NaN", tt.name, tt.got)
			}
			continue
		}
		if !near(tt.got, tt.want, 1e-15) {
			t.Errorf("%s: %.17g, want %.17g", tt.name, tt.got, tt.want)
		}
	}

	s := ScoreClasses([]int{-1, -1}, mat.NewDense(2, 2, []float64{0.5, 0.5, 0.5, 0.5}), 0.5)
	for name, v := range map[string]float64{"AUC": s.AUC, "accuracy": s.Accuracy, "log loss": s.LogLoss, "sensitivity": s.Sensitivity} {
		if !math.IsNaN(v) {
			t.Errorf("no labelled rows: %s = %v, want NaN", name, v)
		}
	}
	// PredictedClasses: a NaN row has no class; ties go to the lowest index.
	pred := PredictedClasses(mat.NewDense(3, 3, []float64{nan, 0.5, 0.5, 0.4, 0.4, 0.2, 0.2, 0.3, 0.5}), 0.5)
	if !equalInts(pred, []int{-1, 0, 2}) {
		t.Errorf("predicted classes %v, want [-1 0 2]", pred)
	}
	// Calibration: probabilities just outside [0, 1] go to the end bins.
	bins := Calibration([]bool{false, true}, []float64{-1e-17, 1 + 2e-16}, 4)
	if len(bins) != 2 || bins[0].Low != 0 || bins[1].High != 1 || bins[0].Count != 1 || bins[1].ObservedRate != 1 {
		t.Errorf("calibration of out-of-range probabilities: %+v", bins)
	}
}

func TestClassMetricsPanics(t *testing.T) {
	tests := []struct {
		name string
		f    func()
	}{
		{"label ≥ K", func() { LogLoss([]int{2}, mat.NewDense(1, 2, []float64{0.5, 0.5})) }},
		{"length mismatch", func() { Brier([]int{0, 1}, mat.NewDense(1, 2, []float64{0.5, 0.5})) }},
		{"one class", func() { PredictedClasses(mat.NewDense(1, 1, []float64{1}), 0.5) }},
		{"ROC lengths", func() { ROCAUC([]bool{true}, nil) }},
		{"no bins", func() { Calibration(nil, nil, 0) }},
		{"confusion class", func() { Confusion([]int{0}, []int{3}, 2) }},
	}
	for _, tt := range tests {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", tt.name)
				}
			}()
			tt.f()
		}()
	}
}

// Hanley & McNeil (1982, Radiology 143:29, their equations 1–3) give the
// standard error of an AUC A from n₊ positives and n₋ negatives,
//
//	SE² = (A(1 − A) + (n₊ − 1)(Q₁ − A²) + (n₋ − 1)(Q₂ − A²)) / (n₊ n₋),
//	Q₁ = A/(2 − A), Q₂ = 2A²/(1 + A),
//
// so the 95% percentile interval of a large sample spans about 2·1.96·SE.
func TestBootstrapClassCIAUCWidth(t *testing.T) {
	src := rand.New(rand.NewPCG(7, 8))
	const n = 300
	ids := make([]string, n)
	labels := make([]int, n)
	proba := mat.NewDense(n, 2, nil)
	for i := range n {
		ids[i] = fmt.Sprintf("sub-%03d", i)
		labels[i] = i % 2
		p1 := 1 / (1 + math.Exp(-(float64(labels[i]) - 0.5 + src.NormFloat64())))
		proba.SetRow(i, []float64{1 - p1, p1})
	}
	auc := func(y []int, p *mat.Dense) float64 { return OneVsRestAUC(y, p) }
	iv := BootstrapClassCI(ids, labels, proba, auc, 1000, 0.95, rand.New(rand.NewPCG(9, 10)))
	a := iv.Estimate
	if a != OneVsRestAUC(labels, proba) {
		t.Errorf("estimate %v is not the AUC of the rows", a)
	}
	q1, q2 := a/(2-a), 2*a*a/(1+a)
	const half = n / 2
	se := math.Sqrt((a*(1-a) + (half-1)*(q1-a*a) + (half-1)*(q2-a*a)) / (half * half))
	if !(iv.Lower < a && a < iv.Upper) || iv.Undefined != 0 {
		t.Fatalf("interval %+v", iv)
	}
	if width, want := iv.Upper-iv.Lower, 2*1.96*se; math.Abs(width-want) > 0.15*want {
		t.Errorf("95%% interval width %.4f, want about %.4f (Hanley & McNeil)", width, want)
	}
}

// BootstrapClassCI draws participants as BootstrapCI does: with the same
// stream, the interval of mean |y − p₁| equals BootstrapCI's MAE interval of
// the same numbers; and the two identical repeats of each participant stay
// together, so doubling every row leaves the AUC interval as it was.
func TestBootstrapClassCIResamplesParticipants(t *testing.T) {
	src := rand.New(rand.NewPCG(11, 12))
	const n = 40
	var ids, ids2 []string
	var labels, labels2 []int
	var p1s []float64
	var rows []Prediction
	for i := range n {
		id := fmt.Sprintf("sub-%02d", i)
		y := i % 2
		if i%7 == 0 {
			y = 1 - y
		}
		p1 := math.Min(1, math.Max(0, 0.3+0.4*float64(y)+0.25*src.NormFloat64()))
		ids, labels, p1s = append(ids, id), append(labels, y), append(p1s, p1)
		rows = append(rows, Prediction{ParticipantID: id, Model: "m", Target: "dx", Observed: float64(y), Predicted: p1})
	}
	for repeat := 0; repeat < 2; repeat++ {
		ids2 = append(ids2, ids...)
		labels2 = append(labels2, labels...)
	}
	dense := func(p1 []float64) *mat.Dense {
		m := mat.NewDense(len(p1), 2, nil)
		for i, p := range p1 {
			m.SetRow(i, []float64{1 - p, p})
		}
		return m
	}
	proba, proba2 := dense(p1s), dense(append(slices.Clone(p1s), p1s...))

	meanAbs := func(y []int, p *mat.Dense) float64 {
		obs := make([]float64, len(y))
		for i, c := range y {
			obs[i] = float64(c)
		}
		return MAE(obs, mat.Col(nil, 1, p))
	}
	got := BootstrapClassCI(ids, labels, proba, meanAbs, 500, 0.9, rand.New(rand.NewPCG(1, 1)))
	want, err := BootstrapCI(rows, MetricMAE, 0, 500, 0.9, rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		t.Fatal(err)
	}
	if got != want {
		t.Errorf("class bootstrap %+v, score bootstrap %+v", got, want)
	}

	auc := func(y []int, p *mat.Dense) float64 { return ROCAUC(positiveClass(y), mat.Col(nil, 1, p)) }
	one := BootstrapClassCI(ids, labels, proba, auc, 500, 0.95, rand.New(rand.NewPCG(2, 2)))
	two := BootstrapClassCI(ids2, labels2, proba2, auc, 500, 0.95, rand.New(rand.NewPCG(2, 2)))
	if one != two {
		t.Errorf("one repeat %+v, two identical repeats %+v", one, two)
	}
}

// A resample that draws no positive has no AUC: it is counted, not used.
func TestBootstrapClassCIUndefined(t *testing.T) {
	labels := []int{0, 0, 0, 0, 1}
	proba := mat.NewDense(5, 2, []float64{0.9, 0.1, 0.8, 0.2, 0.7, 0.3, 0.6, 0.4, 0.2, 0.8})
	ids := []string{"a", "b", "c", "d", "e"}
	auc := func(y []int, p *mat.Dense) float64 { return OneVsRestAUC(y, p) }
	iv := BootstrapClassCI(ids, labels, proba, auc, 200, 0.95, rand.New(rand.NewPCG(3, 3)))
	// P(no positive among 5 draws) = (4/5)⁵ ≈ 0.33, so about 66 of 200.
	if iv.Undefined < 30 || iv.Undefined > 110 || iv.Estimate != 1 || iv.Lower != 1 || iv.Upper != 1 {
		t.Errorf("interval %+v", iv)
	}
}
