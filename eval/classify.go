package eval

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// The classification metrics below score the class probabilities a
// classifier predicted for participants whose class is known. A label is a
// class index in [0, K); a negative label (−1) marks a missing class and
// its row is skipped, as eval skips incomplete pairs of scores. proba is
// n × K, row i holding the probability of each class for participant i
// (each row sums to 1); a row holding NaN is skipped as well. For K = 2,
// class 1 is the positive class: sensitivity, specificity, ROC curves and
// the threshold are about it. A label outside [−1, K) and lengths that do
// not match panic: they are programmer errors, not data.

// LogLossEpsilon is the bound to which LogLoss clips probabilities, so that
// a probability of exactly 0 for the observed class costs −log(1e-15) ≈ 34.5
// and not +Inf.
const LogLossEpsilon = 1e-15

// ClassScores holds the classification metrics of one set of predictions
// (ScoreClasses).
type ClassScores struct {
	// AUCWithin is the headline AUC, AUC within folds: over one set of
	// predictions, such as one test fold, ScoreClasses sets it to AUC;
	// pooled over the folds of a run it is AUCWithinFolds
	// (SummarizeClasses), which is free of the bias that the training
	// folds' class frequencies give pooled AUC.
	AUCWithin float64
	// AUC is the area under the ROC curve (ROCAUC of class 1 for K = 2;
	// the macro one-vs-rest average, OneVsRestAUC, for K > 2). Pooled
	// over the folds of a run it carries the bias AUCWithinFolds
	// describes.
	AUC float64
	// BalancedAccuracy is the mean recall of the classes (BalancedAccuracy).
	BalancedAccuracy float64
	// Accuracy is the fraction of participants whose predicted class
	// (PredictedClasses) is their class.
	Accuracy float64
	// LogLoss is the mean cross-entropy of the probabilities (LogLoss).
	LogLoss float64
	// Brier is the Brier score (Brier).
	Brier float64
	// Sensitivity is the recall of class 1, TP / (TP + FN), at the
	// threshold; NaN for K > 2 or when no participant is in class 1.
	Sensitivity float64
	// Specificity is the recall of class 0, TN / (TN + FP), at the
	// threshold; NaN for K > 2 or when no participant is in class 0.
	Specificity float64
}

// ScoreClasses returns the classification metrics of the class
// probabilities proba (n × K, K ≥ 2) for participants of the classes in
// labels (length n). The predicted class of a participant is that of
// PredictedClasses(proba, threshold): for K = 2, class 1 when its
// probability is at least threshold; for K > 2 the most probable class
// (threshold is ignored). Rows with a missing label (negative) or a NaN
// probability are skipped; a metric that is undefined for the rows left
// (no rows, a class absent for AUC, sensitivity or specificity) is NaN.
// The rows are taken as one test fold: AUCWithin equals AUC.
func ScoreClasses(labels []int, proba *mat.Dense, threshold float64) ClassScores {
	y, p := completeClassRows(labels, proba)
	n, k := len(y), p.k
	s := ClassScores{
		AUCWithin: math.NaN(), AUC: math.NaN(), BalancedAccuracy: math.NaN(), Accuracy: math.NaN(), LogLoss: math.NaN(),
		Brier: math.NaN(), Sensitivity: math.NaN(), Specificity: math.NaN(),
	}
	if n == 0 {
		return s
	}
	pm := p.dense()
	predicted := PredictedClasses(pm, threshold)
	var correct int
	for i, c := range y {
		if predicted[i] == c {
			correct++
		}
	}
	s.Accuracy = float64(correct) / float64(n)
	s.BalancedAccuracy = BalancedAccuracy(y, predicted, k)
	s.LogLoss = LogLoss(y, pm)
	s.Brier = Brier(y, pm)
	if k == 2 {
		s.AUC = ROCAUC(positiveClass(y), p.column(1))
		cm := Confusion(y, predicted, 2)
		s.Sensitivity = ratio(cm[1][1], cm[1][0]+cm[1][1])
		s.Specificity = ratio(cm[0][0], cm[0][0]+cm[0][1])
	} else {
		s.AUC = OneVsRestAUC(y, pm)
	}
	s.AUCWithin = s.AUC
	return s
}

// ratio returns a/b, NaN when b is 0.
func ratio(a, b int) float64 {
	if b == 0 {
		return math.NaN()
	}
	return float64(a) / float64(b)
}

// probRows is a row-major n × k copy of complete rows of probabilities.
type probRows struct {
	k    int
	data []float64
}

func (p probRows) row(i int) []float64 { return p.data[i*p.k : (i+1)*p.k] }

func (p probRows) column(j int) []float64 {
	n := len(p.data) / p.k
	col := make([]float64, n)
	for i := range n {
		col[i] = p.data[i*p.k+j]
	}
	return col
}

// dense returns the rows as a *mat.Dense; mat.NewDense does not accept
// zero rows, so callers check for them first.
func (p probRows) dense() *mat.Dense {
	return mat.NewDense(len(p.data)/p.k, p.k, p.data)
}

// completeClassRows returns the labels and probability rows in which the
// label is not missing and no probability is NaN, in their order. It panics
// when the lengths do not match, K < 2 or a label is K or more.
func completeClassRows(labels []int, proba *mat.Dense) ([]int, probRows) {
	n, k := proba.Dims()
	if n != len(labels) {
		panic(fmt.Sprintf("eval: %d labels but %d rows of probabilities", len(labels), n))
	}
	if k < 2 {
		panic(fmt.Sprintf("eval: probabilities of %d classes", k))
	}
	y := make([]int, 0, n)
	p := probRows{k: k, data: make([]float64, 0, n*k)}
rows:
	for i, c := range labels {
		if c >= k {
			panic(fmt.Sprintf("eval: label %d of row %d outside [0, %d)", c, i, k))
		}
		if c < 0 {
			continue
		}
		row := proba.RawRowView(i)
		for _, v := range row {
			if math.IsNaN(v) {
				continue rows
			}
		}
		y = append(y, c)
		p.data = append(p.data, row...)
	}
	return y, p
}

func positiveClass(y []int) []bool {
	pos := make([]bool, len(y))
	for i, c := range y {
		pos[i] = c == 1
	}
	return pos
}

// PredictedClasses returns the predicted class of each row of proba (n × K,
// K ≥ 2). For K = 2 it is 1 when the probability of class 1 is at least
// threshold and 0 otherwise; for K > 2 it is the class of highest
// probability, the lowest index among ties, and threshold is ignored. A row
// holding NaN has no predicted class (−1).
func PredictedClasses(proba *mat.Dense, threshold float64) []int {
	n, k := proba.Dims()
	if k < 2 {
		panic(fmt.Sprintf("eval: probabilities of %d classes", k))
	}
	predicted := make([]int, n)
	for i := range n {
		row := proba.RawRowView(i)
		best := 0
		for j, v := range row {
			if math.IsNaN(v) {
				best = -1
				break
			}
			if v > row[best] {
				best = j
			}
		}
		if best >= 0 && k == 2 {
			best = 0
			if row[1] >= threshold {
				best = 1
			}
		}
		predicted[i] = best
	}
	return predicted
}

// ROCAUC returns the area under the ROC curve of score as a predictor of
// positive, computed as the Mann–Whitney statistic
//
//	AUC = (R₊ − n₊(n₊ + 1)/2) / (n₊ · n₋),
//
// where R₊ is the sum of the ranks (AverageRanks, 1-based, ties sharing the
// mean rank) of the positive participants' scores among all scores, and n₊
// and n₋ count the positives and negatives. It is the probability that a
// random positive scores above a random negative, a tie counting 1/2
// (Hanley & McNeil 1982, Radiology 143:29), and equals the trapezoidal area
// under ROCCurve. Pairs whose score is NaN are skipped. AUC is NaN when
// either class is absent: with one class there is no pair to rank. The
// lengths of positive and score must be equal.
func ROCAUC(positive []bool, score []float64) float64 {
	if len(positive) != len(score) {
		panic(fmt.Sprintf("eval: %d classes but %d scores", len(positive), len(score)))
	}
	pos := make([]bool, 0, len(score))
	s := make([]float64, 0, len(score))
	for i, v := range score {
		if !math.IsNaN(v) {
			pos = append(pos, positive[i])
			s = append(s, v)
		}
	}
	u, pairs := mannWhitneyU(pos, s)
	if pairs == 0 {
		return math.NaN()
	}
	return u / pairs
}

// mannWhitneyU returns the Mann–Whitney statistic of the scores of the
// positives among score, U = R₊ − n₊(n₊ + 1)/2 (R₊ the sum of their
// average ranks): the number of positive–negative pairs in which the
// positive scores higher, a tie counting 1/2; and pairs = n₊ · n₋, the
// number of such pairs. score holds no NaN.
func mannWhitneyU(positive []bool, score []float64) (u, pairs float64) {
	var nPos int
	var rankSum float64
	for i, r := range AverageRanks(score) {
		if positive[i] {
			nPos++
			rankSum += r
		}
	}
	np := float64(nPos)
	return rankSum - np*(np+1)/2, np * float64(len(score)-nPos)
}

// OneVsRestAUC returns the macro-averaged one-vs-rest area under the ROC
// curve of the class probabilities proba (n × K, K ≥ 2),
//
//	AUC = (1/K) Σₖ ROCAUC(labels = k, proba[·, k]),
//
// each class against all others scored by its own column, the unweighted
// mean over classes. Rows with a missing label or a NaN probability are
// skipped. It is NaN when any class has no participant (the AUC of that
// class is undefined, and averaging over the classes present would change
// what the number means). For K = 2 it equals ROCAUC of class 1 when the
// rows sum to 1.
func OneVsRestAUC(labels []int, proba *mat.Dense) float64 {
	y, p := completeClassRows(labels, proba)
	if len(y) == 0 {
		return math.NaN()
	}
	var sum float64
	pos := make([]bool, len(y))
	for k := range p.k {
		for i, c := range y {
			pos[i] = c == k
		}
		sum += ROCAUC(pos, p.column(k))
	}
	return sum / float64(p.k)
}

// ROCCurve returns the receiver operating characteristic curve of score as
// a predictor of positive: for each threshold t, the false positive rate
// fpr = FP(t)/n₋ and the true positive rate tpr = TP(t)/n₊ of calling
// positive every participant with score ≥ t. The thresholds are the
// distinct scores in decreasing order, preceded by +Inf, so the curve runs
// from (0, 0) to (1, 1) with one point per distinct score (no collinear
// point is dropped). Pairs whose score is NaN are skipped. When either class
// is absent its rate is NaN throughout.
//
// This is scikit-learn's roc_curve with drop_intermediate=False, except for
// the first threshold: scikit-learn 1.2 puts max(score) + 1 there (later
// versions +Inf, from memory); both call no participant positive.
func ROCCurve(positive []bool, score []float64) (fpr, tpr, thresholds []float64) {
	if len(positive) != len(score) {
		panic(fmt.Sprintf("eval: %d classes but %d scores", len(positive), len(score)))
	}
	order := make([]int, 0, len(score))
	var nPos, nNeg int
	for i, v := range score {
		if math.IsNaN(v) {
			continue
		}
		order = append(order, i)
		if positive[i] {
			nPos++
		} else {
			nNeg++
		}
	}
	sort.SliceStable(order, func(a, b int) bool { return score[order[a]] > score[order[b]] })
	fpr = []float64{ratio(0, nNeg)}
	tpr = []float64{ratio(0, nPos)}
	thresholds = []float64{math.Inf(1)}
	var tp, fp int
	for j, i := range order {
		if positive[i] {
			tp++
		} else {
			fp++
		}
		if j+1 < len(order) && score[order[j+1]] == score[i] {
			continue
		}
		fpr = append(fpr, ratio(fp, nNeg))
		tpr = append(tpr, ratio(tp, nPos))
		thresholds = append(thresholds, score[i])
	}
	return fpr, tpr, thresholds
}

// BalancedAccuracy returns the mean over classes of the recall of each
// class,
//
//	BA = (1/K′) Σₖ TPₖ / nₖ,
//
// where nₖ counts the participants of class k, TPₖ those of them predicted
// k, and the sum runs over the K′ classes with nₖ > 0 (as scikit-learn's
// balanced_accuracy_score, which leaves out a class absent from the
// observed labels). For K = 2 it is (sensitivity + specificity)/2. Pairs in
// which either class is missing (negative) are skipped; it is NaN when no
// pair is left. labels and predicted must have equal lengths and hold
// classes below classes.
func BalancedAccuracy(labels, predicted []int, classes int) float64 {
	cm := Confusion(labels, predicted, classes)
	var sum float64
	var present int
	for k, row := range cm {
		var nk int
		for _, c := range row {
			nk += c
		}
		if nk == 0 {
			continue
		}
		present++
		sum += float64(row[k]) / float64(nk)
	}
	if present == 0 {
		return math.NaN()
	}
	return sum / float64(present)
}

// LogLoss returns the mean cross-entropy (log loss) of the probabilities
// given to each participant's class,
//
//	L = −(1/n) Σᵢ log clip(pᵢ,yᵢ),  clip(p) = min(max(p, ε), 1 − ε),
//
// with ε = LogLossEpsilon, in nats. Rows with a missing label or a NaN
// probability are skipped; it is NaN when none is left. scikit-learn's
// log_loss (1.2) also renormalises each clipped row to sum 1, which changes
// L by at most about K·ε for rows that sum to 1.
func LogLoss(labels []int, proba *mat.Dense) float64 {
	y, p := completeClassRows(labels, proba)
	if len(y) == 0 {
		return math.NaN()
	}
	var sum float64
	for i, c := range y {
		v := math.Min(math.Max(p.row(i)[c], LogLossEpsilon), 1-LogLossEpsilon)
		sum -= math.Log(v)
	}
	return sum / float64(len(y))
}

// Brier returns the Brier score of the probabilities (Brier 1950, "Verification
// of forecasts expressed in terms of probability", Mon. Weather Rev. 78:1).
// For K = 2 it is the mean squared error of the probability of class 1,
//
//	B = (1/n) Σᵢ (pᵢ,₁ − yᵢ)²,  yᵢ = 1 for class 1 and 0 for class 0,
//
// as scikit-learn's brier_score_loss, between 0 and 1; for K > 2 it is
// Brier's multi-class score,
//
//	B = (1/n) Σᵢ Σₖ (pᵢ,ₖ − [yᵢ = k])²,
//
// between 0 and 2. (For K = 2 the multi-class formula would give twice the
// binary score.) Rows with a missing label or a NaN probability are skipped;
// it is NaN when none is left.
func Brier(labels []int, proba *mat.Dense) float64 {
	y, p := completeClassRows(labels, proba)
	if len(y) == 0 {
		return math.NaN()
	}
	var sum float64
	for i, c := range y {
		row := p.row(i)
		if p.k == 2 {
			d := row[1] - float64(c)
			sum += d * d
			continue
		}
		for k, v := range row {
			if k == c {
				v -= 1
			}
			sum += v * v
		}
	}
	return sum / float64(len(y))
}

// Confusion returns the classes × classes confusion matrix of labels and
// predicted: element [k][j] counts the participants of class k predicted j
// (rows observed, columns predicted, as scikit-learn's confusion_matrix).
// Pairs in which either class is missing (negative) are skipped. labels and
// predicted must have equal lengths and hold classes below classes.
func Confusion(labels, predicted []int, classes int) [][]int {
	if len(labels) != len(predicted) {
		panic(fmt.Sprintf("eval: %d labels but %d predicted classes", len(labels), len(predicted)))
	}
	if classes < 1 {
		panic(fmt.Sprintf("eval: confusion matrix of %d classes", classes))
	}
	cm := make([][]int, classes)
	for k := range cm {
		cm[k] = make([]int, classes)
	}
	for i, c := range labels {
		j := predicted[i]
		if c >= classes || j >= classes {
			panic(fmt.Sprintf("eval: row %d has class %d predicted %d, outside [0, %d)", i, c, j, classes))
		}
		if c < 0 || j < 0 {
			continue
		}
		cm[c][j]++
	}
	return cm
}

// A CalibrationBin is one bin of predicted probabilities (Calibration).
type CalibrationBin struct {
	Low, High     float64 // the bin's edges
	MeanPredicted float64 // mean predicted probability of its participants
	ObservedRate  float64 // fraction of its participants that are positive
	Count         int     // participants in the bin, at least 1
}

// Calibration returns the reliability curve of the probabilities p of the
// positive class: [0, 1] is cut into bins of equal width 1/bins, and for
// each bin holding participants it gives their mean predicted probability
// and the fraction of them that are positive. A well calibrated model's
// bins lie on the diagonal. Empty bins are omitted, so fewer than bins
// may be returned, in increasing order.
//
// The edges are those of numpy's linspace(0, 1, bins+1), eᵢ = i·(1/bins)
// for 0 < i < bins, e₀ = 0 and e_bins = 1 (i/bins up to rounding). Bin i
// holds the p with eᵢ < p ≤ eᵢ₊₁, the first bin also p = 0, so a
// probability on an inner edge goes to the lower bin: the bins of
// scikit-learn's calibration_curve with strategy="uniform". A probability
// below 0 or above 1 (rounding of a model's output) goes to the first or
// last bin and counts in its mean as it is (scikit-learn rejects it). Pairs
// whose p is NaN are skipped. bins must be at least 1, and positive and p
// of equal lengths.
func Calibration(positive []bool, p []float64, bins int) []CalibrationBin {
	if len(positive) != len(p) {
		panic(fmt.Sprintf("eval: %d classes but %d probabilities", len(positive), len(p)))
	}
	if bins < 1 {
		panic(fmt.Sprintf("eval: %d calibration bins", bins))
	}
	width := 1 / float64(bins)
	edges := make([]float64, bins+1)
	for i := range bins {
		edges[i] = float64(i) * width
	}
	edges[bins] = 1
	inner := edges[1:bins]
	sums := make([]float64, bins)
	hits := make([]int, bins)
	counts := make([]int, bins)
	for i, v := range p {
		if math.IsNaN(v) {
			continue
		}
		// The first inner edge at or above v: numpy's searchsorted.
		b := sort.SearchFloat64s(inner, v)
		sums[b] += v
		counts[b]++
		if positive[i] {
			hits[b]++
		}
	}
	var out []CalibrationBin
	for b, c := range counts {
		if c == 0 {
			continue
		}
		out = append(out, CalibrationBin{
			Low:           edges[b],
			High:          edges[b+1],
			MeanPredicted: sums[b] / float64(c),
			ObservedRate:  float64(hits[b]) / float64(c),
			Count:         c,
		})
	}
	return out
}

// BootstrapClassCI returns a percentile bootstrap confidence interval at
// level (0 < level < 1) for a classification metric of the class
// probabilities proba (n × K) of participants with the classes in labels,
// such as
//
//	func(y []int, p *mat.Dense) float64 { return eval.OneVsRestAUC(y, p) }
//
// or a field of ScoreClasses at a threshold. ids names the participant of
// each row (length n); the rows of one participant, such as its
// predictions in each repeat, are resampled together, exactly as
// BootstrapCI resamples the predictions of scores: each of resamples draws
// as many participants as ids holds, uniformly with replacement from rng,
// and metric is computed on all rows of the drawn participants. An empty id
// is a participant of its own. Estimate is metric of all rows; the bounds
// are the empirical (1 − level)/2 and (1 + level)/2 quantiles
// (EmpiricalQuantile) of the resamples where metric is defined, the others
// counted in Undefined (a resample that misses a class has no AUC).
func BootstrapClassCI(ids []string, labels []int, proba *mat.Dense, metric func(labels []int, proba *mat.Dense) float64,
	resamples int, level float64, rng *rand.Rand) Interval {
	if resamples < 1 {
		panic(fmt.Sprintf("eval: %d bootstrap resamples", resamples))
	}
	if !(level > 0 && level < 1) {
		panic(fmt.Sprintf("eval: confidence level %v outside (0, 1)", level))
	}
	n, k := proba.Dims()
	if len(ids) != n || len(labels) != n {
		panic(fmt.Sprintf("eval: %d participant ids and %d labels for %d rows of probabilities", len(ids), len(labels), n))
	}
	return bootstrapParticipants(ids, resamples, level, rng, func(idx []int) float64 {
		if idx == nil {
			return metric(labels, proba)
		}
		y := make([]int, len(idx))
		p := mat.NewDense(len(idx), k, nil)
		for j, i := range idx {
			y[j] = labels[i]
			p.SetRow(j, proba.RawRowView(i))
		}
		return metric(y, p)
	})
}
