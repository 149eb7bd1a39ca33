package eval

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/skein-neuro/skein/data"
)

// PermutationPValue returns the permutation p-value of an observed statistic
// against its values under permutation,
//
//	p = (1 + #{null ≥ observed}) / (1 + len(null)),
//
// counting null ≤ observed instead when lowerIsBetter (errors such as MAE).
// Counting the observed value among the permutations keeps p above zero and
// makes the test exact (Phipson & Smyth 2010, "Permutation P-values should
// never be zero", Stat. Appl. Genet. Mol. Biol. 9:39). A NaN in null (a
// permutation whose metric was undefined) counts as at least as extreme as
// the observed value, the conservative choice; p is NaN when observed is.
func PermutationPValue(observed float64, null []float64, lowerIsBetter bool) float64 {
	if math.IsNaN(observed) {
		return math.NaN()
	}
	extreme := 1
	for _, v := range null {
		switch {
		case math.IsNaN(v):
			extreme++
		case lowerIsBetter && v <= observed:
			extreme++
		case !lowerIsBetter && v >= observed:
			extreme++
		}
	}
	return float64(extreme) / float64(1+len(null))
}

// TTest is the result of a corrected resampled t-test.
type TTest struct {
	J        int     // number of differences: folds × repeats
	MeanDiff float64 // mean of the differences
	T        float64 // t statistic
	DF       float64 // degrees of freedom, J − 1
	P        float64 // two-sided p-value
}

// CorrectedTTest compares two models scored on the same J cross-validation
// folds (all repeats) by the corrected resampled t-test of Nadeau & Bengio
// (2003, "Inference for the generalization error", Machine Learning 52:239).
// diff holds one difference of a metric per fold (model A minus model B, in
// the same folds); nTrain and nTest are the numbers of participants in a
// training and a test fold (their means if folds differ). With d̄ and s²
// the mean and sample variance (denominator J − 1) of diff,
//
//	t = d̄ / sqrt((1/J + nTest/nTrain) · s²),  df = J − 1,
//
// and P is the two-sided p-value 2·(1 − F(|t|)) of Student's t with df
// degrees of freedom. The nTest/nTrain term widens the plain paired t-test,
// which would treat overlapping training sets as independent. With J < 2, T
// and P are NaN; with s² = 0, T is ±Inf (P = 0) or NaN when d̄ = 0.
func CorrectedTTest(diff []float64, nTrain, nTest float64) TTest {
	if nTrain <= 0 || nTest <= 0 {
		panic(fmt.Sprintf("eval: corrected t-test with %v training and %v test participants", nTrain, nTest))
	}
	j := len(diff)
	res := TTest{J: j, MeanDiff: math.NaN(), T: math.NaN(), DF: float64(j - 1), P: math.NaN()}
	if j == 0 {
		return res
	}
	mean, sd := meanSD(diff)
	res.MeanDiff = mean
	if j < 2 {
		return res
	}
	se := math.Sqrt((1/float64(j) + nTest/nTrain) * sd * sd)
	res.T = mean / se
	if math.IsNaN(res.T) {
		return res
	}
	dist := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: res.DF}
	res.P = 2 * dist.Survival(math.Abs(res.T))
	return res
}

// FoldDifferences returns, for each repeat × fold that a and b both scored,
// a's value of m minus b's, in the order of a.Folds. It is an error when
// the two groups were not scored on the same folds.
func FoldDifferences(a, b *Group, m Metric) ([]float64, error) {
	if len(a.Folds) != len(b.Folds) {
		return nil, fmt.Errorf("eval: %s has %d folds but %s has %d", a.Model, len(a.Folds), b.Model, len(b.Folds))
	}
	type foldKey struct{ repeat, fold int }
	bByFold := make(map[foldKey]float64, len(b.Folds))
	for _, f := range b.Folds {
		bByFold[foldKey{f.Repeat, f.Fold}] = f.Get(m)
	}
	diff := make([]float64, len(a.Folds))
	for i, f := range a.Folds {
		bv, ok := bByFold[foldKey{f.Repeat, f.Fold}]
		if !ok {
			return nil, fmt.Errorf("eval: %s has repeat %d fold %d but %s does not", a.Model, f.Repeat, f.Fold, b.Model)
		}
		diff[i] = f.Get(m) - bv
	}
	return diff, nil
}

// An Interval is a bootstrap confidence interval.
type Interval struct {
	Estimate     float64 // the metric on the rows as given
	Lower, Upper float64 // percentile bounds
	Level        float64 // confidence level, such as 0.95
	Resamples    int     // bootstrap resamples drawn
	Undefined    int     // resamples in which the metric was NaN, left out of the bounds
}

// BootstrapCI returns a percentile bootstrap confidence interval at level
// (0 < level < 1) for the pooled metric m of rows, which must all belong to
// one model and one target, pooled as Summarize pools them (for
// MetricPearsonWithin, each fold of a resample centred on its own
// members). bins is used by NMI and AMI (≤ 0 means DefaultBins).
//
// What is resampled is participants: each of resamples draws as many
// participants as rows holds, uniformly with replacement from rng, and
// takes all rows of each drawn participant (one per repeat), so that the
// repeats of one participant, which are not independent, stay together.
// Rows with an empty ParticipantID are each their own participant. The
// bounds are the empirical (1 − level)/2 and (1 + level)/2 quantiles of the
// resampled metric (EmpiricalQuantile), over the resamples where it is
// defined.
func BootstrapCI(rows []Prediction, m Metric, bins, resamples int, level float64, rng *rand.Rand) (Interval, error) {
	if resamples < 1 {
		panic(fmt.Sprintf("eval: %d bootstrap resamples", resamples))
	}
	if !(level > 0 && level < 1) {
		panic(fmt.Sprintf("eval: confidence level %v outside (0, 1)", level))
	}
	if len(rows) == 0 {
		return Interval{}, errors.New("eval: bootstrap of no predictions")
	}
	ids := make([]string, len(rows))
	for i, p := range rows {
		if p.Model != rows[0].Model || p.Target != rows[0].Target {
			return Interval{}, fmt.Errorf("eval: bootstrap rows mix model %q target %q with model %q target %q",
				rows[0].Model, rows[0].Target, p.Model, p.Target)
		}
		ids[i] = p.ParticipantID
	}
	resample := make([]Prediction, 0, len(rows))
	iv := bootstrapParticipants(ids, resamples, level, rng, func(idx []int) float64 {
		if idx == nil {
			return metricOfRows(rows, m, bins)
		}
		resample = resample[:0]
		for _, i := range idx {
			resample = append(resample, rows[i])
		}
		return metricOfRows(resample, m, bins)
	})
	return iv, nil
}

// bootstrapParticipants returns the percentile bootstrap interval of a
// statistic of rows that belong to the participants ids (one id per row;
// an empty id is a participant of its own). statOf(nil) is the statistic
// of all rows as given; statOf(idx) that of the rows idx, which lists, for
// each of len(units) participants drawn uniformly with replacement from
// rng, all rows of the participant in their order. The bounds are the
// empirical quantiles of the defined resampled values.
func bootstrapParticipants(ids []string, resamples int, level float64, rng *rand.Rand, statOf func(idx []int) float64) Interval {
	units := data.GroupIndices(ids)
	iv := Interval{Estimate: statOf(nil), Level: level, Resamples: resamples}
	stats := make([]float64, 0, resamples)
	idx := make([]int, 0, len(ids))
	for range resamples {
		idx = idx[:0]
		for range units {
			idx = append(idx, units[rng.IntN(len(units))]...)
		}
		v := statOf(idx)
		if math.IsNaN(v) {
			iv.Undefined++
			continue
		}
		stats = append(stats, v)
	}
	if len(stats) == 0 {
		iv.Lower, iv.Upper = math.NaN(), math.NaN()
		return iv
	}
	sort.Float64s(stats)
	iv.Lower = EmpiricalQuantile((1-level)/2, stats)
	iv.Upper = EmpiricalQuantile((1+level)/2, stats)
	return iv
}

// metricOfRows returns m of the rows of one model and target, pooled as in
// Summarize: PearsonWithinFolds for MetricPearsonWithin, m.Compute of the
// pairs otherwise.
func metricOfRows(rows []Prediction, m Metric, bins int) float64 {
	if m == MetricPearsonWithin {
		return PearsonWithinFolds(rows)
	}
	obs := make([]float64, len(rows))
	pred := make([]float64, len(rows))
	for i, p := range rows {
		obs[i], pred[i] = p.Observed, p.Predicted
	}
	return m.Compute(obs, pred, bins)
}

// EmpiricalQuantile returns the q-quantile of the ascending values sorted
// by the inverse of their empirical distribution function: the k-th
// smallest value, k = ⌈q·n⌉ (at least 1), the definition of the percentile
// interval (Efron & Tibshirani 1993, An Introduction to the Bootstrap,
// §13.3: with 1000 resamples the 95% interval runs from the 25th to the
// 975th ordered value). q·n within rounding of a whole number counts as
// that number, so that (1 − 0.95)/2 · 1000, which is 25.000000000000025 in
// floating point, picks the 25th value and not the 26th. sorted must not
// be empty; q outside [0, 1] panics.
func EmpiricalQuantile(q float64, sorted []float64) float64 {
	if !(q >= 0 && q <= 1) || len(sorted) == 0 {
		panic(fmt.Sprintf("eval: quantile %v of %d values", q, len(sorted)))
	}
	x := q * float64(len(sorted))
	if whole := math.Round(x); math.Abs(x-whole) <= 1e-9*math.Max(1, x) {
		x = whole
	}
	k := min(max(int(math.Ceil(x)), 1), len(sorted))
	return sorted[k-1]
}

// KSUniform returns the Kolmogorov–Smirnov statistic of the sample x against
// the uniform distribution on [0, 1],
//
//	D = sup |Fₙ(u) − u| = max over i of max(i/n − x₍ᵢ₎, x₍ᵢ₎ − (i−1)/n),
//
// with x₍₁₎ ≤ … ≤ x₍ₙ₎ the sorted sample (values outside [0, 1] are clamped
// to it), and its asymptotic p-value P(K > √n·D), where K follows
// Kolmogorov's distribution,
//
//	P(K > λ) = 2 Σₖ₌₁^∞ (−1)^(k−1) exp(−2k²λ²).
//
// The asymptotic p-value is accurate for n of a few dozen or more. Both are
// NaN for an empty sample or one holding NaN.
func KSUniform(x []float64) (d, p float64) {
	n := len(x)
	if n == 0 {
		return math.NaN(), math.NaN()
	}
	sorted := make([]float64, n)
	for i, v := range x {
		if math.IsNaN(v) {
			return math.NaN(), math.NaN()
		}
		sorted[i] = math.Max(0, math.Min(1, v))
	}
	sort.Float64s(sorted)
	for i, u := range sorted {
		d = math.Max(d, math.Max(float64(i+1)/float64(n)-u, u-float64(i)/float64(n)))
	}
	return d, KolmogorovSurvival(math.Sqrt(float64(n)) * d)
}

// KolmogorovSurvival returns P(K > λ) for Kolmogorov's limiting distribution
// of √n·D,
//
//	P(K > λ) = 2 Σₖ₌₁^∞ (−1)^(k−1) exp(−2k²λ²),
//
// evaluated for small λ through the equivalent series of the distribution
// function, P(K ≤ λ) = (√(2π)/λ) Σₖ₌₁^∞ exp(−(2k−1)²π²/(8λ²)), which
// converges fast where the first does not.
func KolmogorovSurvival(lambda float64) float64 {
	switch {
	case math.IsNaN(lambda):
		return math.NaN()
	case lambda <= 0:
		return 1
	case lambda < 1:
		var cdf float64
		for k := 1; k <= 20; k++ {
			odd := float64(2*k - 1)
			term := math.Exp(-odd * odd * math.Pi * math.Pi / (8 * lambda * lambda))
			cdf += term
			if term < 1e-17*cdf {
				break
			}
		}
		return 1 - math.Sqrt(2*math.Pi)/lambda*cdf
	}
	var sf float64
	sign := 1.0
	for k := 1; k <= 100; k++ {
		fk := float64(k)
		term := math.Exp(-2 * fk * fk * lambda * lambda)
		sf += sign * term
		if term < 1e-17 {
			break
		}
		sign = -sign
	}
	return math.Max(0, math.Min(1, 2*sf))
}
