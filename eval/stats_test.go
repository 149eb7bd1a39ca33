package eval

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The corrected resampled t-test against t computed by hand in the fixture
// script from Nadeau & Bengio's (2003) formula and p from scipy.stats.t.sf
// (testdata/eval/make_fixtures.py, ttest_cases).
func TestCorrectedTTestAgainstScipy(t *testing.T) {
	for _, c := range loadFixtures(t).TTest {
		got := CorrectedTTest(c.Diff, c.NTrain, c.NTest)
		if got.J != len(c.Diff) || got.DF != c.DF {
			t.Errorf("%s: J, DF = %d, %v; want %d, %v", c.Name, got.J, got.DF, len(c.Diff), c.DF)
		}
		if !near(got.MeanDiff, c.Mean, 1e-12) || !near(got.T, c.T, 1e-10) || !near(got.P, c.P, 1e-9) {
			t.Errorf("%s: mean, t, p = %.12g, %.12g, %.12g; want %.12g, %.12g, %.12g",
				c.Name, got.MeanDiff, got.T, got.P, c.Mean, c.T, c.P)
		}
	}
}

func TestCorrectedTTestDegenerate(t *testing.T) {
	// Hand-checked (common practice, no source).
	if got := CorrectedTTest([]float64{0.1}, 80, 20); !math.IsNaN(got.T) || got.MeanDiff != 0.1 {
		t.Errorf("one fold: %+v, want T NaN and MeanDiff 0.1", got)
	}
	if got := CorrectedTTest([]float64{0.5, 0.5, 0.5}, 80, 20); !math.IsInf(got.T, 1) || got.P != 0 {
		t.Errorf("no variance: %+v, want T +Inf and P 0", got)
	}
	if got := CorrectedTTest([]float64{0, 0, 0}, 80, 20); !math.IsNaN(got.T) || !math.IsNaN(got.P) {
		t.Errorf("all zero: %+v, want T and P NaN", got)
	}
}

// The Kolmogorov–Smirnov statistic and asymptotic p-value against
// scipy.stats.kstest(x, "uniform", method="asymp") (make_fixtures.py,
// ks_cases).
func TestKSUniformAgainstScipy(t *testing.T) {
	for _, c := range loadFixtures(t).KS {
		d, p := KSUniform(c.X)
		if !near(d, c.D, 1e-14) || !near(p, c.P, 1e-10) {
			t.Errorf("%s: D, p = %.15g, %.15g; scipy gives %.15g, %.15g", c.Name, d, p, c.D, c.P)
		}
	}
}

// Kolmogorov's limiting survival function against scipy.special.kolmogorov,
// across the switch between the two series at λ = 1.
func TestKolmogorovSurvivalAgainstScipy(t *testing.T) {
	for _, c := range loadFixtures(t).Kolmogorov {
		if got := KolmogorovSurvival(c.Lambda); !near(got, c.Survival, 1e-12) {
			t.Errorf("λ = %v: %.15g, scipy gives %.15g", c.Lambda, got, c.Survival)
		}
	}
}

// Phipson & Smyth (2010): p = (1 + b) / (1 + m); worked by hand.
func TestPermutationPValue(t *testing.T) {
	null := []float64{0.1, 0.3, 0.5, 0.2, 0.4, 0.6, 0.05, 0.35, 0.45}
	tests := []struct {
		name          string
		observed      float64
		null          []float64
		lowerIsBetter bool
		want          float64
	}{
		{"beats every permutation", 0.9, null, false, 1.0 / 10},
		{"ties count", 0.5, null, false, 3.0 / 10},
		{"below every permutation", 0.0, null, false, 1},
		{"MAE below every permutation", 0.01, null, true, 1.0 / 10},
		{"MAE ties count", 0.1, null, true, 3.0 / 10},
		{"NaN permutation counts as extreme", 0.9, []float64{math.NaN(), 0.1}, false, 2.0 / 3},
		{"no permutations", 0.5, nil, false, 1},
	}
	for _, tt := range tests {
		if got := PermutationPValue(tt.observed, tt.null, tt.lowerIsBetter); !near(got, tt.want, 1e-15) {
			t.Errorf("%s: p = %v, want %v", tt.name, got, tt.want)
		}
	}
	if p := PermutationPValue(math.NaN(), null, false); !math.IsNaN(p) {
		t.Errorf("NaN observed: p = %v, want NaN", p)
	}
}

// The bootstrap standard error of a mean is sqrt((n−1)/n)·s/√n, s the
// sample SD (Efron & Tibshirani 1993, An Introduction to the Bootstrap,
// §5.2; from memory). MAE is the mean of |y − ŷ|, so with normal resampling
// error its 95% percentile interval spans about 2·1.96 of that.
func TestBootstrapCIMAEWidth(t *testing.T) {
	src := rand.New(rand.NewPCG(1, 2))
	const n = 400
	rows := make([]Prediction, n)
	abs := make([]float64, n)
	for i := range rows {
		obs := 100 + 15*src.NormFloat64()
		pred := obs + 8*src.NormFloat64()
		rows[i] = Prediction{ParticipantID: string(rune('A'+i%26)) + string(rune('a'+i/26)), Model: "m", Target: "t", Observed: obs, Predicted: pred}
		abs[i] = math.Abs(obs - pred)
	}
	_, sd := meanSD(abs)
	se := math.Sqrt(float64(n-1)/n) * sd / math.Sqrt(n)
	iv, err := BootstrapCI(rows, MetricMAE, 0, 2000, 0.95, rand.New(rand.NewPCG(3, 4)))
	if err != nil {
		t.Fatal(err)
	}
	if !(iv.Lower < iv.Estimate && iv.Estimate < iv.Upper) {
		t.Fatalf("interval %+v does not hold its estimate", iv)
	}
	if width, want := iv.Upper-iv.Lower, 2*1.96*se; math.Abs(width-want) > 0.15*want {
		t.Errorf("95%% interval width %.4f, want about %.4f", width, want)
	}
	if iv.Estimate != MAE(obsOf(rows), predOf(rows)) {
		t.Errorf("estimate %v is not the MAE of the rows", iv.Estimate)
	}
	again, _ := BootstrapCI(rows, MetricMAE, 0, 2000, 0.95, rand.New(rand.NewPCG(3, 4)))
	if again != iv {
		t.Errorf("same seed, different interval: %+v and %+v", iv, again)
	}
}

func obsOf(rows []Prediction) []float64 {
	out := make([]float64, len(rows))
	for i, p := range rows {
		out[i] = p.Observed
	}
	return out
}

func predOf(rows []Prediction) []float64 {
	out := make([]float64, len(rows))
	for i, p := range rows {
		out[i] = p.Predicted
	}
	return out
}

// Resampling participants keeps each participant's repeats together: with
// two identical repeats, every resample holds every drawn participant
// twice, so r of the resample equals r of its distinct draws and the
// interval matches the one-repeat interval drawn with the same stream.
func TestBootstrapCIResamplesParticipants(t *testing.T) {
	src := rand.New(rand.NewPCG(5, 6))
	var one, two []Prediction
	for i := range 50 {
		obs := src.NormFloat64()
		p := Prediction{ParticipantID: string(rune('A' + i)), Model: "m", Target: "t", Observed: obs, Predicted: obs + src.NormFloat64()}
		one = append(one, p)
		p2 := p
		p2.Repeat = 1
		two = append(two, p, p2)
	}
	a, err := BootstrapCI(one, MetricPearson, 0, 300, 0.9, rand.New(rand.NewPCG(7, 8)))
	if err != nil {
		t.Fatal(err)
	}
	b, err := BootstrapCI(two, MetricPearson, 0, 300, 0.9, rand.New(rand.NewPCG(7, 8)))
	if err != nil {
		t.Fatal(err)
	}
	if !near(a.Lower, b.Lower, 1e-12) || !near(a.Upper, b.Upper, 1e-12) {
		t.Errorf("one repeat %+v, two identical repeats %+v", a, b)
	}
	mixed := append([]Prediction{{Model: "other", Target: "t"}}, one...)
	if _, err := BootstrapCI(mixed, MetricPearson, 0, 10, 0.9, rand.New(rand.NewPCG(1, 1))); err == nil {
		t.Error("no error for rows of two models")
	}
}

func TestFoldDifferences(t *testing.T) {
	a := &Group{Model: "a", Folds: []FoldScores{{Repeat: 0, Fold: 0, Scores: Scores{Values: Values{MAE: 3}}}, {Repeat: 0, Fold: 1, Scores: Scores{Values: Values{MAE: 5}}}}}
	b := &Group{Model: "b", Folds: []FoldScores{{Repeat: 0, Fold: 1, Scores: Scores{Values: Values{MAE: 4}}}, {Repeat: 0, Fold: 0, Scores: Scores{Values: Values{MAE: 1}}}}}
	d, err := FoldDifferences(a, b, MetricMAE)
	if err != nil || len(d) != 2 || d[0] != 2 || d[1] != 1 {
		t.Errorf("FoldDifferences = %v, %v; want [2 1]", d, err)
	}
	b.Folds[0].Fold = 7
	if _, err := FoldDifferences(a, b, MetricMAE); err == nil {
		t.Error("no error for different folds")
	}
}

func TestKSUniformEdgeCases(t *testing.T) {
	// One value at 0.5: D = 0.5 by hand (common practice, no source).
	if d, _ := KSUniform([]float64{0.5}); d != 0.5 {
		t.Errorf("D of {0.5} = %v, want 0.5", d)
	}
	// Values outside [0, 1] are clamped: {-1, 2} is {0, 1}, D = 0.5.
	if d, _ := KSUniform([]float64{-1, 2}); d != 0.5 {
		t.Errorf("D of {-1, 2} = %v, want 0.5", d)
	}
	if d, p := KSUniform([]float64{0.2, math.NaN()}); !math.IsNaN(d) || !math.IsNaN(p) {
		t.Errorf("NaN sample: %v, %v", d, p)
	}
	if d, p := KSUniform(nil); !math.IsNaN(d) || !math.IsNaN(p) {
		t.Errorf("empty sample: %v, %v", d, p)
	}
}

// The percentile interval takes fixed order statistics of the sorted
// resamples: Efron & Tibshirani 1993, An Introduction to the Bootstrap,
// §13.3 (from memory): with B = 1000 the 95% interval is the 25th and the
// 975th value. numpy 1.24's quantile(x, q, method="inverted_cdf") picks
// the same values when q is written as the exact decimal (0.025, 0.975,
// 0.05, 0.005, 0.995); given q as (1 − level)/2 in floating point it too
// takes the 26th value of 1000, the defect this guards against.
func TestEmpiricalQuantileOrderStatistics(t *testing.T) {
	tests := []struct {
		level        float64
		n            int
		lower, upper float64 // 1-based ranks of the bounds
	}{
		{0.95, 1000, 25, 975},
		{0.90, 2000, 100, 1900},
		{0.95, 200, 5, 195},
		{0.99, 1000, 5, 995},
		{0.95, 10, 1, 10}, // ⌈0.25⌉ = 1 and ⌈9.75⌉ = 10
	}
	for _, tt := range tests {
		sorted := make([]float64, tt.n)
		for i := range sorted {
			sorted[i] = float64(i + 1)
		}
		lo := EmpiricalQuantile((1-tt.level)/2, sorted)
		hi := EmpiricalQuantile((1+tt.level)/2, sorted)
		if lo != tt.lower || hi != tt.upper {
			t.Errorf("level %v, %d resamples: bounds are the %vth and %vth values, want the %vth and %vth",
				tt.level, tt.n, lo, hi, tt.lower, tt.upper)
		}
	}
}
