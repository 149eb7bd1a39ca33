package eval

import (
	"math"
	"testing"
)

// Each metric against scipy.stats.pearsonr / spearmanr and scikit-learn's
// mean_absolute_error, median_absolute_error, mean_squared_error (square
// root taken), r2_score, normalized_mutual_info_score and
// adjusted_mutual_info_score (average_method="arithmetic") on labels binned
// by the script with skein's rule (scipy.stats.rankdata, method "min"), and
// the chance level of NMI as 2·expected_mutual_information / (sum of the
// scipy.stats.entropy of the label counts) (testdata/eval/make_fixtures.py,
// metric_cases and constant_metric_cases). For predictions that skein calls
// constant, the script hands scipy constant predictions, which give NaN,
// and scikit-learn one bin.
func TestScoreAgainstScipySklearn(t *testing.T) {
	f := loadFixtures(t)
	if len(f.Metrics) == 0 {
		t.Fatal("no metric cases in fixtures.json")
	}
	for _, c := range f.Metrics {
		t.Run(c.Name, func(t *testing.T) {
			obs, pred := floats(c.Observed), floats(c.Predicted)
			got := Score(obs, pred, c.Bins)
			if got.N != c.Want.N || got.Missing != c.Want.Missing || got.Bins != c.Bins {
				t.Errorf("N, Missing, Bins = %d, %d, %d; want %d, %d, %d", got.N, got.Missing, got.Bins, c.Want.N, c.Want.Missing, c.Bins)
			}
			checkValues(t, c.Name, got.Values, c.Want.values(), 1e-10)
			if want := float64(c.Want.NMIChance); !near(got.NMIChance, want, 1e-12) {
				t.Errorf("NMIChance = %.17g, want %.17g", got.NMIChance, want)
			}
			// The single-metric functions agree with Score.
			single := Values{
				PearsonWithin: MetricPearsonWithin.Compute(obs, pred, c.Bins), Pearson: Pearson(obs, pred), Spearman: Spearman(obs, pred), MAE: MAE(obs, pred),
				MedianAE: MedianAE(obs, pred), RMSE: RMSE(obs, pred), R2: R2(obs, pred), NMI: NMI(obs, pred, c.Bins),
				AMI: AMI(obs, pred, c.Bins),
			}
			checkValues(t, c.Name+" single", single, got.Values, 0)
		})
	}
}

// Anscombe (1973), "Graphs in statistical analysis", The American
// Statistician 27:17-21: the four sets all have r = 0.816 as the paper
// prints it (set IV is 0.8165, so the check allows 0.001). The data are in fixtures.json, written by the
// script from memory and cross-checked against the seaborn-data copy; the
// full-precision r values come from scipy.stats.pearsonr.
func TestPearsonAnscombe(t *testing.T) {
	f := loadFixtures(t)
	if len(f.Anscombe) != 4 {
		t.Fatalf("%d Anscombe sets, want 4", len(f.Anscombe))
	}
	for _, s := range f.Anscombe {
		r := Pearson(s.X, s.Y)
		if math.Abs(r-0.816) > 0.001 {
			t.Errorf("set %s: r = %.4f, the paper gives 0.816", s.Set, r)
		}
		if !near(r, s.Pearson, 1e-13) {
			t.Errorf("set %s: r = %.17g, scipy gives %.17g", s.Set, r, s.Pearson)
		}
	}
}

// Manning, Raghavan & Schütze (2008), Introduction to Information
// Retrieval, §16.3 and Figure 16.4: three clusters of 17 points against
// three classes, purity 0.71 and NMI 0.36 (to two decimals). The counts
// come from the figure, written from memory; purity 0.71 confirms them, and
// scikit-learn's normalized_mutual_info_score gives the full-precision NMI.
func TestNMILabelsIIR(t *testing.T) {
	f := loadFixtures(t)
	clusters, classes := f.IIRNMI.Clusters, f.IIRNMI.Classes
	if len(clusters) != 17 {
		t.Fatalf("%d points, want 17", len(clusters))
	}
	// Purity: the share of points in their cluster's majority class.
	counts := map[[2]int]int{}
	for i := range clusters {
		counts[[2]int{clusters[i], classes[i]}]++
	}
	majority := map[int]int{}
	for k, n := range counts {
		majority[k[0]] = max(majority[k[0]], n)
	}
	var hits int
	for _, n := range majority {
		hits += n
	}
	if purity := float64(hits) / 17; math.Round(purity*100)/100 != 0.71 {
		t.Fatalf("purity = %.3f, the book gives 0.71: the data are wrong", purity)
	}
	got := NMILabels(classes, clusters)
	if math.Round(got*100)/100 != 0.36 {
		t.Errorf("NMI = %.4f, the book gives 0.36", got)
	}
	if !near(got, f.IIRNMI.NMISklearn, 1e-13) {
		t.Errorf("NMI = %.17g, scikit-learn gives %.17g", got, f.IIRNMI.NMISklearn)
	}
	if sym := NMILabels(clusters, classes); !near(sym, got, 1e-15) {
		t.Errorf("NMI not symmetric: %v and %v", got, sym)
	}
}

// skein's binning rule, reproduced in the fixture script with
// scipy.stats.rankdata(method="min") (make_fixtures.py, binning_cases).
func TestEqualFrequencyBins(t *testing.T) {
	for _, c := range loadFixtures(t).Binning {
		got := EqualFrequencyBins(c.X, c.Bins)
		for i := range got {
			if got[i] != c.Want[i] {
				t.Errorf("bins=%d: got %v, want %v", c.Bins, got, c.Want)
				break
			}
		}
	}
}

// Hand-checked edge cases (common practice, no source): undefined metrics
// are NaN, NMILabels of constant labelings is 0 by skein's definition, and
// labelings that match one to one have AMI 1.
func TestMetricEdgeCases(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name      string
		obs, pred []float64
		metric    Metric
		want      float64
	}{
		{"pearson one pair", []float64{1}, []float64{2}, MetricPearson, nan},
		{"pearson constant prediction", []float64{1, 2, 3}, []float64{5, 5, 5}, MetricPearson, nan},
		{"spearman constant observed", []float64{4, 4, 4}, []float64{1, 2, 3}, MetricSpearman, nan},
		{"pearson perfect negative", []float64{1, 2, 3}, []float64{3, 2, 1}, MetricPearson, -1},
		{"mae empty", nil, nil, MetricMAE, nan},
		{"mae all missing", []float64{nan, 1}, []float64{2, nan}, MetricMAE, nan},
		{"mae", []float64{1, 2, 3}, []float64{2, 2, 5}, MetricMAE, 1},
		{"median ae even", []float64{0, 0, 0, 0}, []float64{1, 2, 4, 8}, MetricMedianAE, 3},
		{"rmse", []float64{0, 0}, []float64{3, 4}, MetricRMSE, math.Sqrt(12.5)},
		{"r2 constant observed", []float64{2, 2}, []float64{1, 3}, MetricR2, nan},
		{"r2 mean prediction", []float64{1, 2, 3}, []float64{2, 2, 2}, MetricR2, 0},
		{"nmi empty", nil, nil, MetricNMI, nan},
		{"nmi perfect", []float64{1, 2, 3, 4}, []float64{10, 20, 30, 40}, MetricNMI, 1},
		{"nmi constant prediction", []float64{1, 2, 3, 4}, []float64{5, 5, 5, 5}, MetricNMI, 0},
		{"ami empty", nil, nil, MetricAMI, nan},
		{"ami all missing", []float64{nan}, []float64{1}, MetricAMI, nan},
		{"ami perfect", []float64{1, 2, 3, 4}, []float64{10, 20, 30, 40}, MetricAMI, 1},
		{"ami constant prediction", []float64{1, 2, 3, 4}, []float64{5, 5, 5, 5}, MetricAMI, 0},
	}
	for _, tt := range tests {
		got := tt.metric.Compute(tt.obs, tt.pred, 2)
		if !near(got, tt.want, 1e-15) {
			t.Errorf("%s: %s = %v, want %v", tt.name, tt.metric, got, tt.want)
		}
	}
	if got := NMILabels([]int{1, 1, 1}, []int{7, 7, 7}); got != 0 {
		t.Errorf("NMILabels of constant labelings = %v, want 0", got)
	}
}

func TestAverageRanks(t *testing.T) {
	// Worked by hand: ties share the mean of the ranks they span.
	got := AverageRanks([]float64{10, 20, 20, 30, 20, 5})
	want := []float64{2, 4, 4, 6, 4, 1}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("AverageRanks = %v, want %v", got, want)
		}
	}
}

func TestLengthMismatchPanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("no panic for mismatched lengths")
		}
	}()
	MAE([]float64{1, 2}, []float64{1})
}

func TestParseMetric(t *testing.T) {
	for _, m := range Metrics() {
		got, err := ParseMetric(string(m))
		if err != nil || got != m {
			t.Errorf("ParseMetric(%q) = %q, %v", m, got, err)
		}
	}
	if _, err := ParseMetric("accuracy"); err == nil {
		t.Error("ParseMetric accepted an unknown name")
	}
}
