package eval

import (
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"
)

// AMILabels, NMILabels, ExpectedMILabels and ExpectedNMILabels against the
// fixture script (make_fixtures.py, ami_cases): scikit-learn's
// adjusted_mutual_info_score and normalized_mutual_info_score
// (average_method="arithmetic"), its expected_mutual_information, the chance
// level 2·E[I]/(H(A)+H(B)) with scipy.stats.entropy of the label counts,
// E[I] summed in 40-digit mpmath for three cases (to a relative 1e−13; the
// others to 1e−12 absolute, relative for values above 1), and for two cases the
// mean NMI of 20000 random pairings (numpy permutations).
func TestMutualInformationAgainstSklearn(t *testing.T) {
	cases := loadFixtures(t).AMI
	if len(cases) < 10 {
		t.Fatalf("%d AMI cases in fixtures.json, want at least 10", len(cases))
	}
	for _, c := range cases {
		t.Run(c.Name, func(t *testing.T) {
			if got := AMILabels(c.A, c.B); !near(got, c.AMI, 1e-12) {
				t.Errorf("AMILabels = %.17g, want %.17g", got, c.AMI)
			}
			if c.AMI != c.AMISklearn {
				// The conventions differ only where every pairing gives the
				// same mutual information (documented on AMILabels).
				if ct := newContingency(c.A, c.B); !ct.chanceOnly() {
					t.Errorf("skein's AMI %v differs from scikit-learn's %v for labelings with %d and %d labels of %d items",
						c.AMI, c.AMISklearn, len(ct.countA), len(ct.countB), ct.n)
				}
			}
			if got := AMILabels(c.B, c.A); !near(got, c.AMI, 1e-12) {
				t.Errorf("AMILabels(b, a) = %.17g, want %.17g", got, c.AMI)
			}
			if got := NMILabels(c.A, c.B); !near(got, c.NMI, 1e-12) {
				t.Errorf("NMILabels = %.17g, want %.17g", got, c.NMI)
			}
			emi := ExpectedMILabels(c.A, c.B)
			if !near(emi, c.EMISklearn, 1e-12) {
				t.Errorf("ExpectedMILabels = %.17g, scikit-learn gives %.17g", emi, c.EMISklearn)
			}
			if c.EMIMpmath != nil {
				// Relative error 1e−13: scikit-learn's sums of lgamma are
				// off by 3e−12 at n = 2000 (ExpectedMILabels doc).
				if want := float64(*c.EMIMpmath); math.Abs(emi-want) > 1e-13*want {
					t.Errorf("ExpectedMILabels = %.17g, mpmath gives %.17g (relative error %.2g)", emi, want, math.Abs(emi-want)/want)
				}
			}
			chance := ExpectedNMILabels(c.A, c.B)
			if !near(chance, c.NMIChance, 1e-12) {
				t.Errorf("ExpectedNMILabels = %.17g, want %.17g", chance, c.NMIChance)
			}
			if c.NMIChanceMC != nil {
				mc, se := float64(*c.NMIChanceMC), float64(*c.NMIChanceMCSE)
				if math.Abs(chance-mc) > 4*se {
					t.Errorf("ExpectedNMILabels = %.5f, Monte Carlo %.5f ± %.5f", chance, mc, se)
				}
			}
		})
	}
}

// The degenerate cases documented on AMILabels and ExpectedNMILabels
// (skein's conventions; scikit-learn's are in TestMutualInformationAgainstSklearn).
func TestMutualInformationDegenerate(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name              string
		a, b              []int
		ami, emi, nmiBase float64
	}{
		{"empty", nil, nil, nan, nan, nan},
		{"one item", []int{4}, []int{9}, 0, 0, 0},
		{"both constant", []int{1, 1, 1}, []int{2, 2, 2}, 0, 0, 0},
		{"one constant", []int{0, 1, 2, 0}, []int{5, 5, 5, 5}, 0, 0, 0},
		// Every pairing of singletons pairs them one to one: E[I] = ln 3,
		// the chance level of NMI is 1 and AMI 0 (worked by hand).
		{"both singletons", []int{0, 1, 2}, []int{2, 0, 1}, 0, math.Log(3), 1},
	}
	for _, tt := range tests {
		if got := AMILabels(tt.a, tt.b); !near(got, tt.ami, 1e-15) {
			t.Errorf("%s: AMILabels = %v, want %v", tt.name, got, tt.ami)
		}
		if got := ExpectedMILabels(tt.a, tt.b); !near(got, tt.emi, 1e-15) {
			t.Errorf("%s: ExpectedMILabels = %v, want %v", tt.name, got, tt.emi)
		}
		if got := ExpectedNMILabels(tt.a, tt.b); !near(got, tt.nmiBase, 1e-15) {
			t.Errorf("%s: ExpectedNMILabels = %v, want %v", tt.name, got, tt.nmiBase)
		}
	}
	for name, f := range map[string]func(a, b []int) float64{
		"AMILabels": AMILabels, "ExpectedMILabels": ExpectedMILabels, "ExpectedNMILabels": ExpectedNMILabels, "NMILabels": NMILabels,
	} {
		for _, b := range [][]int{{1}, nil} {
			func() {
				defer func() {
					if recover() == nil {
						t.Errorf("%s: no panic for labelings of 2 and %d items", name, len(b))
					}
				}()
				f([]int{1, 2}, b)
			}()
		}
	}
}

// For large n, 2n·I(A;B) of unrelated labelings is asymptotically χ² with
// (R−1)(C−1) degrees of freedom (the G-test; common practice, no source),
// so E[I] ≈ (R−1)(C−1)/(2n). At n = 50000 the log-factorial sums must stay
// finite and agree with it.
func TestExpectedMILargeN(t *testing.T) {
	for _, tt := range []struct{ n, r, c int }{{50000, 10, 10}, {20000, 5, 8}} {
		a := make([]int, tt.n)
		b := make([]int, tt.n)
		for i := range a {
			a[i] = i * tt.r / tt.n
			b[i] = (i * 7919 % tt.n) * tt.c / tt.n
		}
		got := ExpectedMILabels(a, b)
		want := float64((tt.r-1)*(tt.c-1)) / float64(2*tt.n)
		if math.IsNaN(got) || math.Abs(got-want) > 0.02*want {
			t.Errorf("n=%d, %d×%d labels: E[I] = %.6g, asymptotically %.6g", tt.n, tt.r, tt.c, got, want)
		}
	}
}

// inventedScores returns n integer scores from 0 to 30, many tied, of an
// invented questionnaire.
func inventedScores(n int, seed uint64) []float64 {
	src := rand.New(rand.NewPCG(seed, 7))
	x := make([]float64, n)
	for i := range x {
		x[i] = float64(src.IntN(31))
	}
	return x
}

// A constant predictor (the training mean) says nothing about the scores:
// its NMI, AMI and NMI chance level are 0 whatever the order of the rows
// (skein's documented tie rule; common practice, no source). The rule it
// replaces split ties by their order, and the issue that led to the change
// reported per-fold NMI 0.59 for such a predictor and NMI 1 with the rows
// sorted by score.
func TestConstantPredictorRowOrder(t *testing.T) {
	scores := inventedScores(60, 1)
	byScore := slices.Clone(scores)
	sort.Float64s(byScore)
	descending := slices.Clone(byScore)
	slices.Reverse(descending)
	shuffled := slices.Clone(scores)
	rand.New(rand.NewPCG(3, 3)).Shuffle(len(shuffled), func(i, j int) { shuffled[i], shuffled[j] = shuffled[j], shuffled[i] })
	tests := []struct {
		name     string
		observed []float64
		bins     int
	}{
		{"as drawn", scores, 10},
		{"sorted by score", byScore, 10},
		{"sorted by score, descending", descending, 10},
		{"shuffled", shuffled, 10},
		{"one fold of 8, sorted", byScore[:8], 10},
		{"one fold of 12, shuffled", shuffled[:12], 4},
	}
	for _, tt := range tests {
		pred := make([]float64, len(tt.observed))
		for i := range pred {
			pred[i] = 14.5
		}
		s := Score(tt.observed, pred, tt.bins)
		for _, v := range []struct {
			what string
			got  float64
		}{
			{"NMI", NMI(tt.observed, pred, tt.bins)}, {"AMI", AMI(tt.observed, pred, tt.bins)},
			{"Score NMI", s.NMI}, {"Score AMI", s.AMI}, {"Score NMIChance", s.NMIChance},
		} {
			if v.got != 0 {
				t.Errorf("%s: %s of a constant predictor = %v, want 0", tt.name, v.what, v.got)
			}
		}
		if !math.IsNaN(s.Pearson) || !math.IsNaN(s.Spearman) {
			t.Errorf("%s: r, ρ = %v, %v; want NaN", tt.name, s.Pearson, s.Spearman)
		}
	}
}

// With ties on both sides, NMI and AMI do not depend on the order of the
// pairs (common practice, no source): shuffling the pairs changes nothing
// beyond rounding.
func TestBinnedMetricsIgnoreRowOrder(t *testing.T) {
	obs := inventedScores(45, 4)
	src := rand.New(rand.NewPCG(5, 5))
	pred := make([]float64, len(obs))
	for i, o := range obs {
		pred[i] = math.Round(o/3 + 3*src.NormFloat64())
	}
	want := Score(obs, pred, 5)
	for trial := range 5 {
		perm := src.Perm(len(obs))
		o2, p2 := make([]float64, len(obs)), make([]float64, len(obs))
		for i, j := range perm {
			o2[i], p2[i] = obs[j], pred[j]
		}
		got := Score(o2, p2, 5)
		checkValues(t, "shuffled", got.Values, want.Values, 1e-12)
		if !near(got.NMIChance, want.NMIChance, 1e-12) {
			t.Errorf("trial %d: NMIChance %v, unshuffled %v", trial, got.NMIChance, want.NMIChance)
		}
	}
}

// Predictions that vary by rounding error only, on the scale of the
// observed values, are constant (ConstantPredictions; the threshold is
// skein's, ConstantTolerance = 1e−9 of the population SD).
func TestConstantPredictions(t *testing.T) {
	nan := math.NaN()
	// ±1 has population SD 1, and ±d has spread d exactly.
	unit := []float64{-1, 1, -1, 1}
	below, above := math.Ldexp(1, -31), math.Ldexp(1, -29) // 4.7e−10, 1.9e−9
	tests := []struct {
		name      string
		obs, pred []float64
		want      bool
	}{
		{"empty", nil, nil, true},
		{"one pair", []float64{3}, []float64{4}, true},
		{"equal", []float64{1, 2, 3}, []float64{7, 7, 7}, true},
		{"equal, observed constant", []float64{2, 2}, []float64{7, 7}, true},
		{"varying, observed constant", []float64{2, 2}, []float64{7, 8}, false},
		{"spread below tolerance", unit, []float64{below, -below, below, -below}, true},
		{"spread above tolerance", unit, []float64{above, -above, above, -above}, false},
		{"rounding noise about 0, scores of SD 10", []float64{12, -3, 25, 7, -14, 2}, []float64{-4e-14, 4e-15, 1e-15, -2e-14, 3e-15, 0}, true},
		{"rounding noise about 1e3", []float64{12, -3, 25, 7, -14, 2}, []float64{1000, 1000 + 1.1e-13, 1000 - 2.3e-13, 1000, 1000 + 1.1e-13, 1000}, true},
		{"real spread", []float64{12, -3, 25, 7, -14, 2}, []float64{1, 0.5, 2, 1, 0, 0.7}, false},
		{"NaN pairs skipped", []float64{1, 2, 3}, []float64{5, nan, 5}, true},
	}
	for _, tt := range tests {
		if got := ConstantPredictions(tt.obs, tt.pred); got != tt.want {
			t.Errorf("%s: ConstantPredictions = %v, want %v", tt.name, got, tt.want)
		}
	}
}

// Near-constant predictions get no r or ρ, NMI and AMI 0; the errors and
// R² are computed as usual (their values are checked against scikit-learn
// in TestScoreAgainstScipySklearn, case near_constant_n40).
func TestNearConstantPredictions(t *testing.T) {
	obs := []float64{12, -3, 25, 7, -14, 2, 9, 31}
	tests := []struct {
		name string
		pred []float64
	}{
		{"rounding noise about 0", []float64{-4e-14, 4e-15, 1e-15, -2e-14, 3e-15, 0, -1e-14, 2e-15}},
		{"rounding noise about 7.5", []float64{7.5, 7.5 + 8.9e-16, 7.5, 7.5 - 8.9e-16, 7.5, 7.5 + 1.8e-15, 7.5, 7.5}},
		{"rounding noise ordered as the scores", []float64{3e-15, -1e-15, 5e-15, 2e-15, -3e-15, 1e-15, 2.5e-15, 6e-15}},
	}
	for _, tt := range tests {
		s := Score(obs, tt.pred, 4)
		for _, v := range []struct {
			what      string
			got, want float64
		}{
			{"Pearson", Pearson(obs, tt.pred), math.NaN()},
			{"Spearman", Spearman(obs, tt.pred), math.NaN()},
			{"NMI", NMI(obs, tt.pred, 4), 0},
			{"AMI", AMI(obs, tt.pred, 4), 0},
			{"Score Pearson", s.Pearson, math.NaN()},
			{"Score Spearman", s.Spearman, math.NaN()},
			{"Score NMI", s.NMI, 0},
			{"Score AMI", s.AMI, 0},
			{"Score NMIChance", s.NMIChance, 0},
		} {
			if !near(v.got, v.want, 0) {
				t.Errorf("%s: %s = %v, want %v", tt.name, v.what, v.got, v.want)
			}
		}
		for _, m := range []Metric{MetricMAE, MetricMedianAE, MetricRMSE, MetricR2} {
			if got := s.Get(m); math.IsNaN(got) || got != m.Compute(obs, tt.pred, 4) {
				t.Errorf("%s: %s = %v, want the usual value %v", tt.name, m, got, m.Compute(obs, tt.pred, 4))
			}
		}
	}
}
