package eval

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/internal/enum"
)

// Every metric below takes the observed and the predicted values of the same
// participants, in the same order. The slices must have equal lengths (a
// mismatch panics). A pair in which either value is NaN is skipped; Score
// counts the skipped pairs. A metric that is undefined for the pairs left
// (too few pairs, no variance) is NaN.

// CompletePairs returns the pairs of observed and predicted in which neither
// value is NaN, in their order, and the number of pairs skipped.
func CompletePairs(observed, predicted []float64) (obs, pred []float64, skipped int) {
	checkLengths(observed, predicted)
	obs = make([]float64, 0, len(observed))
	pred = make([]float64, 0, len(predicted))
	for i, o := range observed {
		p := predicted[i]
		if math.IsNaN(o) || math.IsNaN(p) {
			skipped++
			continue
		}
		obs = append(obs, o)
		pred = append(pred, p)
	}
	return obs, pred, skipped
}

func checkLengths(observed, predicted []float64) {
	if len(observed) != len(predicted) {
		panic(fmt.Sprintf("eval: %d observed values but %d predicted", len(observed), len(predicted)))
	}
}

// Pearson returns Pearson's correlation coefficient of the complete pairs,
//
//	r = Σ (yᵢ − ȳ)(ŷᵢ − mean ŷ) / sqrt(Σ (yᵢ − ȳ)² · Σ (ŷᵢ − mean ŷ)²),
//
// computed in two passes (means first, then centred sums) so that large
// offsets do not cost precision. It is NaN for fewer than two pairs, when
// the observed values are constant, and when the predictions are constant
// on the scale of the observed values (ConstantPredictions): a correlation
// of rounding noise is not reported.
func Pearson(observed, predicted []float64) float64 {
	obs, pred, _ := CompletePairs(observed, predicted)
	if constantPredictions(obs, pred) {
		return math.NaN()
	}
	return pearson(obs, pred)
}

func pearson(x, y []float64) float64 {
	if len(x) < 2 || isConstant(x) || isConstant(y) {
		return math.NaN()
	}
	r := stat.Correlation(x, y, nil)
	return math.Max(-1, math.Min(1, r))
}

func isConstant(x []float64) bool {
	for _, v := range x[1:] {
		if v != x[0] {
			return false
		}
	}
	return true
}

// ConstantTolerance is the spread of predictions, relative to the standard
// deviation of the observed values, at or below which ConstantPredictions
// calls them constant.
const ConstantTolerance = 1e-9

// ConstantPredictions reports whether the predictions of the complete pairs
// are constant on the scale of the observed values of the same pairs:
//
//	max |ŷᵢ − mean ŷ| ≤ ConstantTolerance · SD(y),
//	SD(y) = sqrt((1/n) Σ (yᵢ − ȳ)²).
//
// Predictions that are equal are constant, whatever the observed values. A
// model that predicts the mean of its training scores, after confounds were
// regressed out of them, predicts values such as −4e−14 to 4e−15 for scores
// of SD 10: rounding noise, whose order carries nothing. For such
// predictions Pearson and Spearman are NaN, and NMI and AMI put them in one
// bin (both are 0); MAE, median AE, RMSE and R² do not depend on the order
// of the predictions and are computed as usual. It is true for fewer than
// two complete pairs.
func ConstantPredictions(observed, predicted []float64) bool {
	obs, pred, _ := CompletePairs(observed, predicted)
	return constantPredictions(obs, pred)
}

// constantPredictions is ConstantPredictions of complete pairs.
func constantPredictions(obs, pred []float64) bool {
	if len(pred) < 2 || isConstant(pred) {
		return true
	}
	meanPred := stat.Mean(pred, nil)
	var spread float64
	for _, p := range pred {
		spread = math.Max(spread, math.Abs(p-meanPred))
	}
	meanObs := stat.Mean(obs, nil)
	var ss float64
	for _, o := range obs {
		d := o - meanObs
		ss += d * d
	}
	return spread <= ConstantTolerance*math.Sqrt(ss/float64(len(obs)))
}

// Spearman returns Spearman's rank correlation ρ of the complete pairs: the
// Pearson correlation of their ranks, where tied values share the mean of
// the ranks they span (1-based average ranks). It is NaN for fewer than two
// pairs, when the observed values are constant, and when the predictions
// are constant on the scale of the observed values (ConstantPredictions):
// the ranks of rounding noise are not reported.
func Spearman(observed, predicted []float64) float64 {
	obs, pred, _ := CompletePairs(observed, predicted)
	if constantPredictions(obs, pred) {
		return math.NaN()
	}
	return pearson(AverageRanks(obs), AverageRanks(pred))
}

// AverageRanks returns the rank of each value of x among all of x, from 1
// for the smallest; tied values share the mean of the ranks they span, so
// {10, 20, 20, 30} ranks as {1, 2.5, 2.5, 4}. x must not hold NaN.
func AverageRanks(x []float64) []float64 {
	return averageRanks(x, sortedOrder(x))
}

// averageRanks is AverageRanks given the sortedOrder of x.
func averageRanks(x []float64, order []int) []float64 {
	ranks := make([]float64, len(x))
	for lo := 0; lo < len(order); {
		hi := lo + 1
		for hi < len(order) && x[order[hi]] == x[order[lo]] {
			hi++
		}
		// Positions lo..hi-1 hold one value; their 1-based ranks average
		// to (lo+1 + hi)/2.
		mean := float64(lo+1+hi) / 2
		for _, i := range order[lo:hi] {
			ranks[i] = mean
		}
		lo = hi
	}
	return ranks
}

// sortedOrder returns the indices of x ordered by ascending value, ties in
// their order in x.
func sortedOrder(x []float64) []int {
	order := make([]int, len(x))
	for i := range order {
		order[i] = i
	}
	// Breaking ties by index makes the unstable sort stable.
	slices.SortFunc(order, func(a, b int) int {
		if c := cmp.Compare(x[a], x[b]); c != 0 {
			return c
		}
		return cmp.Compare(a, b)
	})
	return order
}

// MAE returns the mean absolute error of the complete pairs,
//
//	MAE = (1/n) Σ |yᵢ − ŷᵢ|,
//
// in the units of the score. It is NaN when no pair is complete.
func MAE(observed, predicted []float64) float64 {
	obs, pred, _ := CompletePairs(observed, predicted)
	if len(obs) == 0 {
		return math.NaN()
	}
	var sum float64
	for i, o := range obs {
		sum += math.Abs(o - pred[i])
	}
	return sum / float64(len(obs))
}

// MedianAE returns the median absolute error of the complete pairs: the
// median of |yᵢ − ŷᵢ|, the mean of the two middle values when n is even. It
// is NaN when no pair is complete.
func MedianAE(observed, predicted []float64) float64 {
	obs, pred, _ := CompletePairs(observed, predicted)
	if len(obs) == 0 {
		return math.NaN()
	}
	abs := make([]float64, len(obs))
	for i, o := range obs {
		abs[i] = math.Abs(o - pred[i])
	}
	sort.Float64s(abs)
	mid := len(abs) / 2
	if len(abs)%2 == 1 {
		return abs[mid]
	}
	return (abs[mid-1] + abs[mid]) / 2
}

// RMSE returns the root mean squared error of the complete pairs,
//
//	RMSE = sqrt((1/n) Σ (yᵢ − ŷᵢ)²),
//
// in the units of the score. It is NaN when no pair is complete.
func RMSE(observed, predicted []float64) float64 {
	obs, pred, _ := CompletePairs(observed, predicted)
	if len(obs) == 0 {
		return math.NaN()
	}
	var sum float64
	for i, o := range obs {
		d := o - pred[i]
		sum += d * d
	}
	return math.Sqrt(sum / float64(len(obs)))
}

// R2 returns the coefficient of determination of the complete pairs,
//
//	R² = 1 − SSres/SStot,  SSres = Σ (yᵢ − ŷᵢ)²,  SStot = Σ (yᵢ − ȳ)²,
//
// where ȳ is the mean of the observed values being scored. This is the
// out-of-sample convention: predictions are not refitted to the observed
// values, so R² is not the square of Pearson's r and is negative when the
// predictions are worse than predicting ȳ for everyone. It is NaN when no
// pair is complete or the observed values are constant (SStot = 0).
func R2(observed, predicted []float64) float64 {
	obs, pred, _ := CompletePairs(observed, predicted)
	if len(obs) == 0 {
		return math.NaN()
	}
	mean := stat.Mean(obs, nil)
	var ssRes, ssTot float64
	for i, o := range obs {
		d := o - pred[i]
		ssRes += d * d
		c := o - mean
		ssTot += c * c
	}
	if ssTot == 0 {
		return math.NaN()
	}
	return 1 - ssRes/ssTot
}

// A Metric names one figure of merit. Its value is the name used in
// metrics.json and on the command line.
type Metric string

// The metrics Score computes.
const (
	// MetricPearsonWithin is the headline r: over one fold it is Pearson's
	// r; pooled over the folds of a run it is PearsonWithinFolds, which is
	// free of the bias that the folds' training means give pooled r.
	MetricPearsonWithin Metric = "pearson_r_within"
	// MetricPearson is Pearson's r; pooled over the folds of a run it
	// carries the bias PearsonWithinFolds describes.
	MetricPearson  Metric = "pearson_r"
	MetricSpearman Metric = "spearman_rho"
	MetricMAE      Metric = "mae"
	MetricMedianAE Metric = "median_ae"
	MetricRMSE     Metric = "rmse"
	MetricR2       Metric = "r2"
	MetricNMI      Metric = "nmi"
	MetricAMI      Metric = "ami"
)

// Metrics returns every metric, in the order tables show them.
func Metrics() []Metric {
	return []Metric{MetricPearsonWithin, MetricPearson, MetricSpearman, MetricMAE, MetricMedianAE, MetricRMSE, MetricR2, MetricNMI, MetricAMI}
}

// UnmarshalText sets m to the metric text names (one of Metrics) or to ""
// (unset). Another name is an error listing the metrics.
func (m *Metric) UnmarshalText(text []byte) error { return enum.Parse(m, text, Metrics()...) }

// MarshalText returns the name of m.
func (m Metric) MarshalText() ([]byte, error) { return []byte(m), nil }

// String returns the name of m.
func (m Metric) String() string { return string(m) }

// ParseMetric returns the metric named s, or an error listing the names.
func ParseMetric(s string) (Metric, error) {
	for _, m := range Metrics() {
		if string(m) == s {
			return m, nil
		}
	}
	return "", fmt.Errorf("unknown metric %q: want one of %s", s, metricNames())
}

// metricNames lists the names of Metrics for a message: "a, b, c".
func metricNames() string {
	names := make([]string, 0, len(Metrics()))
	for _, m := range Metrics() {
		names = append(names, string(m))
	}
	return strings.Join(names, ", ")
}

// LowerIsBetter reports whether smaller values of m mean better predictions
// (the errors MAE, median absolute error and RMSE).
func (m Metric) LowerIsBetter() bool {
	switch m {
	case MetricMAE, MetricMedianAE, MetricRMSE:
		return true
	}
	return false
}

// Label returns the name of m a reader expects in a table, such as
// "Pearson r".
func (m Metric) Label() string {
	switch m {
	case MetricPearsonWithin:
		return "r within folds"
	case MetricPearson:
		return "Pearson r"
	case MetricSpearman:
		return "Spearman ρ"
	case MetricMAE:
		return "MAE"
	case MetricMedianAE:
		return "median AE"
	case MetricRMSE:
		return "RMSE"
	case MetricR2:
		return "R²"
	case MetricNMI:
		return "NMI"
	case MetricAMI:
		return "AMI"
	}
	return string(m)
}

// Compute returns m of the pairs, taken as one fold (so that
// MetricPearsonWithin is Pearson's r; PearsonWithinFolds pools folds);
// bins is used by NMI and AMI only (≤ 0 means DefaultBins). An unknown
// metric panics.
func (m Metric) Compute(observed, predicted []float64, bins int) float64 {
	switch m {
	case MetricPearson, MetricPearsonWithin:
		return Pearson(observed, predicted)
	case MetricSpearman:
		return Spearman(observed, predicted)
	case MetricMAE:
		return MAE(observed, predicted)
	case MetricMedianAE:
		return MedianAE(observed, predicted)
	case MetricRMSE:
		return RMSE(observed, predicted)
	case MetricR2:
		return R2(observed, predicted)
	case MetricNMI:
		return NMI(observed, predicted, bins)
	case MetricAMI:
		return AMI(observed, predicted, bins)
	}
	panic(fmt.Sprintf("eval: unknown metric %q", string(m)))
}

// Values holds one value of each metric. NaN marks a metric that is
// undefined for the pairs scored.
type Values struct {
	// PearsonWithin is the headline r (MetricPearsonWithin).
	PearsonWithin float64
	Pearson       float64 // Pearson r
	Spearman      float64 // Spearman ρ
	MAE           float64 // mean absolute error, in score units
	MedianAE      float64 // median absolute error, in score units
	RMSE          float64 // root mean squared error, in score units
	R2            float64 // out-of-sample R²
	NMI           float64 // NMI of equal-frequency bins
	AMI           float64 // adjusted mutual information of the same bins
}

// Get returns the value of m. An unknown metric panics.
func (v Values) Get(m Metric) float64 {
	return *v.field(m)
}

// Set sets the value of m. An unknown metric panics.
func (v *Values) Set(m Metric, x float64) {
	*v.field(m) = x
}

// fields returns a pointer to each value, in the order of Metrics.
func (v *Values) fields() []*float64 {
	out := make([]*float64, 0, len(Metrics()))
	for _, m := range Metrics() {
		out = append(out, v.field(m))
	}
	return out
}

func (v *Values) field(m Metric) *float64 {
	switch m {
	case MetricPearsonWithin:
		return &v.PearsonWithin
	case MetricPearson:
		return &v.Pearson
	case MetricSpearman:
		return &v.Spearman
	case MetricMAE:
		return &v.MAE
	case MetricMedianAE:
		return &v.MedianAE
	case MetricRMSE:
		return &v.RMSE
	case MetricR2:
		return &v.R2
	case MetricNMI:
		return &v.NMI
	case MetricAMI:
		return &v.AMI
	}
	panic(fmt.Sprintf("eval: unknown metric %q", string(m)))
}

// Scores holds every metric of one set of pairs.
type Scores struct {
	N       int // complete pairs scored
	Missing int // pairs skipped because a value was NaN
	Bins    int // equal-frequency bins of the NMI and AMI
	Values
	// NMIChance is the expected NMI of the same bins under random pairing
	// of the observed values with the predictions (ExpectedNMILabels):
	// compare NMI with it, for it is not 0 in small samples. NaN when no
	// pair is complete.
	NMIChance float64
}

// Score computes every metric of the pairs and the chance level of NMI.
// bins is the number of equal-frequency bins for NMI and AMI; bins ≤ 0
// means DefaultBins. Each value is that of the metric's own function
// (Pearson, …, AMI), constant predictions (ConstantPredictions) included.
func Score(observed, predicted []float64, bins int) Scores {
	if bins <= 0 {
		bins = DefaultBins
	}
	obs, pred, skipped := CompletePairs(observed, predicted)
	s := Scores{N: len(obs), Missing: skipped, Bins: bins}
	for _, m := range []Metric{MetricMAE, MetricMedianAE, MetricRMSE, MetricR2} {
		s.Set(m, m.Compute(obs, pred, bins))
	}
	s.PearsonWithin, s.Pearson, s.Spearman = math.NaN(), math.NaN(), math.NaN()
	s.NMI, s.AMI, s.NMIChance = math.NaN(), math.NaN(), math.NaN()
	if len(obs) == 0 {
		return s
	}
	constant := constantPredictions(obs, pred)
	// Spearman and the binned metrics share one sort of each side.
	orderObs, orderPred := sortedOrder(obs), sortedOrder(pred)
	if !constant {
		s.Pearson = pearson(obs, pred)
		s.PearsonWithin = s.Pearson
		s.Spearman = pearson(averageRanks(obs, orderObs), averageRanks(pred, orderPred))
	}
	c := newContingency(binsOf(obs, orderObs, bins), predictionBins(pred, orderPred, bins, constant))
	emi := c.expectedMI()
	s.NMI, s.AMI, s.NMIChance = c.nmi(), c.ami(emi), c.expectedNMI(emi)
	return s
}
