package eval

import (
	"fmt"
	"math"
	"slices"
)

// DefaultBins is the number of equal-frequency bins NMI and AMI cut scores
// into when no other number is chosen.
const DefaultBins = 10

// EqualFrequencyBins cuts x into at most bins groups of nearly equal size,
// tied values always in the same group, and returns the bin, 0 to bins−1,
// of each value. With the values ranked 1..n in ascending order and every
// value of a run of ties given the first (smallest) rank of its run, k, the
// value falls in bin
//
//	floor(bins·(k − 1)/n).
//
// Without ties this puts n/bins values (rounded down or up) in each bin. A
// run of ties goes whole to the bin of its first rank, so the bins its
// ranks would have reached are smaller or empty; a constant x is one bin,
// whatever the order of its values. The bins depend only on the order of
// the values, never on their spacing or on their order in x, so they are
// unchanged by any increasing transformation of x. This is the rule of
// scipy.stats.rankdata(x, method="min") followed by the formula above. x
// must not hold NaN; bins < 1 panics.
func EqualFrequencyBins(x []float64, bins int) []int {
	if bins < 1 {
		panic(fmt.Sprintf("eval: %d bins, want at least 1", bins))
	}
	return binsOf(x, sortedOrder(x), bins)
}

// binsOf is EqualFrequencyBins given the sortedOrder of x.
func binsOf(x []float64, order []int, bins int) []int {
	n := len(order)
	labels := make([]int, n)
	for lo := 0; lo < n; {
		// Positions lo..hi-1 hold one value; its first rank is lo+1.
		hi := lo + 1
		for hi < n && x[order[hi]] == x[order[lo]] {
			hi++
		}
		bin := bins * lo / n
		for _, i := range order[lo:hi] {
			labels[i] = bin
		}
		lo = hi
	}
	return labels
}

// predictionBins returns the equal-frequency bins of pred given its
// sortedOrder, or one bin for all when the predictions are constant
// (ConstantPredictions).
func predictionBins(pred []float64, order []int, bins int, constant bool) []int {
	if constant {
		return make([]int, len(pred))
	}
	return binsOf(pred, order, bins)
}

// NMI returns the normalized mutual information between the observed and
// the predicted values of the complete pairs, each cut into bins
// equal-frequency bins by EqualFrequencyBins (bins ≤ 0 means DefaultBins):
//
//	NMI = NMILabels(EqualFrequencyBins(y, bins), EqualFrequencyBins(ŷ, bins)).
//
// Predictions that are constant on the scale of the observed values
// (ConstantPredictions) are one bin, so their NMI is 0. NMI lies in [0, 1]:
// 0 when the bins of the predictions say nothing about the bins of the
// observed values, 1 when they match one to one. Binning makes NMI
// insensitive to any monotone rescaling of either side and to the order of
// the pairs. Like any plug-in estimate of mutual information it is biased
// upwards in small samples: random predictions score about
// ExpectedNMILabels of the same bins (Scores.NMIChance), not 0, and with
// n ≤ bins pairs every distinct value has a bin of its own, so that NMI is
// 1 whatever the predictions when no value is tied. Compare NMI with its
// chance level, use AMI, or score NMI on pooled predictions or on sets of
// many more pairs than bins. It is NaN when no pair is complete.
func NMI(observed, predicted []float64, bins int) float64 {
	c, ok := binnedContingency(observed, predicted, bins)
	if !ok {
		return math.NaN()
	}
	return c.nmi()
}

// AMI returns the adjusted mutual information between the observed and the
// predicted values of the complete pairs, binned as NMI bins them
// (EqualFrequencyBins, bins ≤ 0 meaning DefaultBins, and one bin for
// predictions that are constant on the scale of the observed values, whose
// AMI is therefore 0):
//
//	AMI = AMILabels(EqualFrequencyBins(y, bins), EqualFrequencyBins(ŷ, bins)).
//
// Unlike NMI it is about 0 for random predictions at any sample size. It
// is NaN when no pair is complete.
func AMI(observed, predicted []float64, bins int) float64 {
	c, ok := binnedContingency(observed, predicted, bins)
	if !ok {
		return math.NaN()
	}
	return c.ami(c.expectedMI())
}

// binnedContingency bins the complete pairs as NMI and AMI do and counts
// them; ok is false when no pair is complete.
func binnedContingency(observed, predicted []float64, bins int) (c contingency, ok bool) {
	if bins <= 0 {
		bins = DefaultBins
	}
	obs, pred, _ := CompletePairs(observed, predicted)
	if len(obs) == 0 {
		return contingency{}, false
	}
	a := binsOf(obs, sortedOrder(obs), bins)
	b := predictionBins(pred, sortedOrder(pred), bins, constantPredictions(obs, pred))
	return newContingency(a, b), true
}

// NMILabels returns the normalized mutual information of two labelings of
// the same n items (a[i] and b[i] label item i),
//
//	NMI = 2·I(A;B) / (H(A) + H(B)),
//	I(A;B) = Σᵢⱼ (nᵢⱼ/n) ln(n·nᵢⱼ / (aᵢ·bⱼ)),
//	H(A) = −Σᵢ (aᵢ/n) ln(aᵢ/n),  H(B) = −Σⱼ (bⱼ/n) ln(bⱼ/n),
//
// where nᵢⱼ counts the items labelled i in a and j in b, aᵢ and bⱼ are the
// label counts, and logarithms are natural (the ratio does not depend on
// the base). This is the arithmetic-mean normalization. When both labelings
// are constant, H(A) + H(B) = 0 and NMILabels returns 0 (one constant
// labeling tells nothing about another); scikit-learn's
// normalized_mutual_info_score returns 1 in that case. It is NaN for n = 0;
// a length mismatch panics.
func NMILabels(a, b []int) float64 {
	if len(a) == 0 {
		checkLabelLengths(a, b)
		return math.NaN()
	}
	return newContingency(a, b).nmi()
}

// AMILabels returns the adjusted mutual information of two labelings of
// the same n items, with the arithmetic mean of the entropies (Vinh, Epps &
// Bailey 2010, "Information theoretic measures for clusterings comparison",
// JMLR 11:2837–2854, AMI_sum):
//
//	AMI = (I(A;B) − E[I]) / ((H(A) + H(B))/2 − E[I]),
//
// with I, H(A) and H(B) as in NMILabels and E[I] = ExpectedMILabels(a, b),
// the mean of I over all pairings of the labels of a with those of b (the
// permutation model, which keeps both sets of label counts). AMI is 1 for
// labelings that match one to one, about 0 for unrelated labelings at any
// n, and negative when they agree less than chance does; it is at most 1.
//
// When every pairing gives the same I, the denominator is 0 and AMILabels
// returns 0: the agreement cannot be told from chance. That happens exactly
// when both labelings are constant or both give every item a label of its
// own; scikit-learn's adjusted_mutual_info_score returns 1 for the first
// and a value of rounding error over machine epsilon (0 or 1 seen) for the
// second. When exactly one labeling is constant, I = E[I] = 0 and AMI is 0,
// as in scikit-learn. It is NaN for n = 0; a length mismatch panics.
func AMILabels(a, b []int) float64 {
	if len(a) == 0 {
		checkLabelLengths(a, b)
		return math.NaN()
	}
	c := newContingency(a, b)
	return c.ami(c.expectedMI())
}

// ExpectedMILabels returns E[I], the mean mutual information I(A;B) of
// NMILabels over all n! pairings of the items of a with those of b, which
// keep the label counts aᵢ of a and bⱼ of b (Vinh, Epps & Bailey 2010,
// eq. 24a):
//
//	E[I] = Σᵢⱼ Σₖ (k/n) ln(n·k / (aᵢ·bⱼ)) · P(nᵢⱼ = k),
//	P(nᵢⱼ = k) = aᵢ! bⱼ! (n−aᵢ)! (n−bⱼ)! / (n! k! (aᵢ−k)! (bⱼ−k)! (n−aᵢ−bⱼ+k)!),
//
// k from max(1, aᵢ+bⱼ−n) to min(aᵢ, bⱼ): nᵢⱼ is hypergeometric. Rather
// than from the factorials or their logarithms, the probabilities are
// computed from the ratio of successive ones,
//
//	P(nᵢⱼ = k+1) / P(nᵢⱼ = k) = (aᵢ−k)(bⱼ−k) / ((k+1)(n−aᵢ−bⱼ+k+1)),
//
// starting with 1 at the mode, where they are largest, and divided by their
// sum over the whole support, max(0, aᵢ+bⱼ−n) to min(aᵢ, bⱼ). Nothing
// overflows for any n (far tails underflow to 0), and E[I] keeps a relative
// error of about 1e−15 at n = 2000, where sums of logarithms of factorials
// (math.Lgamma, as in scikit-learn's expected_mutual_information) lose
// about 1e−12 to rounding. Pairs of labels with the same counts are summed
// once. E[I] is 0 when either labeling is constant. It is NaN for n = 0; a
// length mismatch panics.
func ExpectedMILabels(a, b []int) float64 {
	if len(a) == 0 {
		checkLabelLengths(a, b)
		return math.NaN()
	}
	return newContingency(a, b).expectedMI()
}

// ExpectedNMILabels returns the chance level of NMILabels(a, b): its mean
// over all pairings of the items of a with those of b. Pairing keeps both
// sets of label counts, so H(A) + H(B) is fixed and the mean is exactly
//
//	E[NMI] = 2·E[I] / (H(A) + H(B)),
//
// with E[I] = ExpectedMILabels(a, b). It is above 0 for any n whenever
// both labelings have two labels or more, and it nears 1 as the labels
// near one item each. It is 0 when H(A) + H(B) = 0, as
// NMILabels is; NaN for n = 0; a length mismatch panics.
func ExpectedNMILabels(a, b []int) float64 {
	if len(a) == 0 {
		checkLabelLengths(a, b)
		return math.NaN()
	}
	c := newContingency(a, b)
	return c.expectedNMI(c.expectedMI())
}

func checkLabelLengths(a, b []int) {
	if len(a) != len(b) {
		panic(fmt.Sprintf("eval: labelings of %d and %d items", len(a), len(b)))
	}
}

// contingency holds the counts of two labelings of n ≥ 1 items.
type contingency struct {
	n              int
	joint          []int // joint[i*len(countB)+j] = nᵢⱼ
	countA, countB []int
}

// newContingency counts the labelings a and b; a length mismatch panics.
func newContingency(a, b []int) contingency {
	checkLabelLengths(a, b)
	// Dense label indices in order of first appearance keep the sums in a
	// fixed order, so the result does not vary from run to run.
	ia, na := denseLabels(a)
	ib, nb := denseLabels(b)
	c := contingency{n: len(a), joint: make([]int, na*nb), countA: make([]int, na), countB: make([]int, nb)}
	for k, i := range ia {
		j := ib[k]
		c.joint[i*nb+j]++
		c.countA[i]++
		c.countB[j]++
	}
	return c
}

// mi returns I(A;B).
func (c contingency) mi() float64 {
	n := float64(c.n)
	nb := len(c.countB)
	var mi float64
	for i, ai := range c.countA {
		for j, bj := range c.countB {
			nij := c.joint[i*nb+j]
			if nij == 0 {
				continue
			}
			f := float64(nij)
			mi += f / n * math.Log(n*f/(float64(ai)*float64(bj)))
		}
	}
	return mi
}

// entropies returns H(A) + H(B).
func (c contingency) entropies() float64 {
	n := float64(c.n)
	return entropy(c.countA, n) + entropy(c.countB, n)
}

func (c contingency) nmi() float64 {
	h := c.entropies()
	if h == 0 {
		return 0
	}
	// Rounding can leave I a hair below 0 or above the entropies.
	return math.Max(0, math.Min(1, 2*c.mi()/h))
}

// ami returns AMILabels given E[I].
func (c contingency) ami(emi float64) float64 {
	if c.chanceOnly() {
		return 0
	}
	return math.Min(1, (c.mi()-emi)/(c.entropies()/2-emi))
}

// expectedNMI returns ExpectedNMILabels given E[I].
func (c contingency) expectedNMI(emi float64) float64 {
	h := c.entropies()
	if h == 0 {
		return 0
	}
	return math.Max(0, math.Min(1, 2*emi/h))
}

// chanceOnly reports whether every pairing of the labels gives the same
// I(A;B), so that E[I] = (H(A) + H(B))/2: both labelings constant, or both
// with one item per label. Otherwise E[I] ≤ min(H(A), H(B)) falls short of
// the mean of the entropies, or some pairing splits a label of one
// labeling over two labels of the other.
func (c contingency) chanceOnly() bool {
	la, lb := len(c.countA), len(c.countB)
	return (la == 1 && lb == 1) || (la == c.n && lb == c.n)
}

// expectedMI returns ExpectedMILabels.
func (c contingency) expectedMI() float64 {
	if len(c.countA) == 1 || len(c.countB) == 1 {
		return 0
	}
	// The inner sum depends on the counts aᵢ and bⱼ alone, and
	// equal-frequency bins have few distinct counts.
	as, bs := countsOfCounts(c.countA), countsOfCounts(c.countB)
	var emi float64
	var weights []float64
	for _, a := range as {
		for _, b := range bs {
			var cell float64
			cell, weights = expectedCellMI(a.count, b.count, c.n, weights)
			emi += float64(a.times*b.times) * cell
		}
	}
	return emi
}

// expectedCellMI returns the expectation of (k/n) ln(n·k/(a·b)) for k =
// nᵢⱼ hypergeometric with label counts a and b of n items (the term 0 for
// k = 0), as documented on ExpectedMILabels. weights is scratch space,
// returned for reuse.
func expectedCellMI(a, b, n int, weights []float64) (float64, []float64) {
	lo, hi := max(0, a+b-n), min(a, b)
	// The mode of the hypergeometric distribution.
	mode := min(max((a+1)*(b+1)/(n+2), lo), hi)
	weights = slices.Grow(weights[:0], hi-lo+1)[:hi-lo+1]
	w := weights
	w[mode-lo] = 1
	for k := mode; k < hi; k++ {
		w[k+1-lo] = w[k-lo] * (float64(a-k) * float64(b-k)) / (float64(k+1) * float64(n-a-b+k+1))
	}
	for k := mode; k > lo; k-- {
		w[k-1-lo] = w[k-lo] * (float64(k) * float64(n-a-b+k)) / (float64(a-k+1) * float64(b-k+1))
	}
	fn, ab := float64(n), float64(a)*float64(b)
	var total, sum float64
	for i, wk := range w {
		total += wk
		if k := float64(lo + i); k > 0 {
			sum += wk * k / fn * math.Log(fn*k/ab)
		}
	}
	return sum / total, weights
}

// countTimes is a label count and the number of labels that have it.
type countTimes struct{ count, times int }

// countsOfCounts returns the distinct values of counts, ascending, each
// with the number of times it occurs.
func countsOfCounts(counts []int) []countTimes {
	sorted := slices.Clone(counts)
	slices.Sort(sorted)
	var out []countTimes
	for _, v := range sorted {
		if len(out) > 0 && out[len(out)-1].count == v {
			out[len(out)-1].times++
			continue
		}
		out = append(out, countTimes{v, 1})
	}
	return out
}

// denseLabels renumbers labels 0, 1, … in order of first appearance and
// returns them with the number of distinct labels.
func denseLabels(labels []int) (dense []int, distinct int) {
	index := make(map[int]int)
	dense = make([]int, len(labels))
	for k, l := range labels {
		i, ok := index[l]
		if !ok {
			i = len(index)
			index[l] = i
		}
		dense[k] = i
	}
	return dense, len(index)
}

// entropy returns −Σ (c/n) ln(c/n) over the counts.
func entropy(counts []int, n float64) float64 {
	var h float64
	for _, c := range counts {
		p := float64(c) / n
		h -= p * math.Log(p)
	}
	return h
}
