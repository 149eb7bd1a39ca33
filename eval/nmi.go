package eval

import (
	"fmt"
	"math"
)

// DefaultBins is the number of equal-frequency bins NMI cuts scores into
// when no other number is chosen.
const DefaultBins = 10

// EqualFrequencyBins cuts x into bins groups of (nearly) equal size and
// returns the bin, 0 to bins−1, of each value. With the values ranked 1..n
// in ascending order, ties ranked in their order in x, the value of rank k
// falls in bin
//
//	floor(bins·(k − 1)/n).
//
// Tied values may therefore fall in different bins; the rule depends only on
// the order of the values, never on their spacing. In particular a constant
// x (the predictions of a model that predicts the training mean) is spread
// over the bins by its order alone, so NMI against it is not 0 but the NMI
// of an arbitrary pairing, small for n much larger than bins. x must not
// hold NaN; bins < 1 panics.
func EqualFrequencyBins(x []float64, bins int) []int {
	if bins < 1 {
		panic(fmt.Sprintf("eval: %d bins, want at least 1", bins))
	}
	return binsOf(sortedOrder(x), bins)
}

// binsOf returns the equal-frequency bin of each value given the sortedOrder
// of the values.
func binsOf(order []int, bins int) []int {
	labels := make([]int, len(order))
	n := len(order)
	for k, i := range order {
		labels[i] = bins * k / n
	}
	return labels
}

// NMI returns the normalized mutual information between the observed and
// the predicted values of the complete pairs, each cut into bins
// equal-frequency bins by EqualFrequencyBins (bins ≤ 0 means DefaultBins):
//
//	NMI = NMILabels(EqualFrequencyBins(y, bins), EqualFrequencyBins(ŷ, bins)).
//
// It lies in [0, 1]: 0 when the bins of the predictions say nothing about
// the bins of the observed values, 1 when they match one to one. Binning
// makes NMI insensitive to any monotone rescaling of either side. Like any
// plug-in estimate of mutual information it is biased upwards in small
// samples: with n ≤ bins pairs every value has a bin of its own and NMI is 1
// whatever the predictions, so score NMI on pooled predictions or on sets of
// many more pairs than bins. It is NaN when no pair is complete.
func NMI(observed, predicted []float64, bins int) float64 {
	if bins <= 0 {
		bins = DefaultBins
	}
	obs, pred, _ := CompletePairs(observed, predicted)
	if len(obs) == 0 {
		return math.NaN()
	}
	return NMILabels(EqualFrequencyBins(obs, bins), EqualFrequencyBins(pred, bins))
}

// NMILabels returns the normalized mutual information of two labelings of
// the same n items (a[i] and b[i] label item i),
//
//	NMI = 2·I(A;B) / (H(A) + H(B)),
//	I(A;B) = Σᵢⱼ (nᵢⱼ/n) ln(n·nᵢⱼ / (nᵢ·mⱼ)),
//	H(A) = −Σᵢ (nᵢ/n) ln(nᵢ/n),  H(B) = −Σⱼ (mⱼ/n) ln(mⱼ/n),
//
// where nᵢⱼ counts the items labelled i in a and j in b, nᵢ and mⱼ are the
// label counts, and logarithms are natural (the ratio does not depend on
// the base). This is the arithmetic-mean normalization. When both labelings
// are constant, H(A) + H(B) = 0 and NMILabels returns 0 (one constant
// labeling tells nothing about another); scikit-learn's
// normalized_mutual_info_score returns 1 in that case. It is NaN for n = 0;
// a length mismatch panics.
func NMILabels(a, b []int) float64 {
	if len(a) != len(b) {
		panic(fmt.Sprintf("eval: labelings of %d and %d items", len(a), len(b)))
	}
	if len(a) == 0 {
		return math.NaN()
	}
	// Dense label indices in order of first appearance keep the sums in a
	// fixed order, so the result does not vary from run to run.
	ia, na := denseLabels(a)
	ib, nb := denseLabels(b)
	joint := make([]int, na*nb)
	countA := make([]int, na)
	countB := make([]int, nb)
	for k, i := range ia {
		j := ib[k]
		joint[i*nb+j]++
		countA[i]++
		countB[j]++
	}
	n := float64(len(a))
	var mi float64
	for i := range na {
		for j := range nb {
			nij := joint[i*nb+j]
			if nij == 0 {
				continue
			}
			f := float64(nij)
			mi += f / n * math.Log(n*f/(float64(countA[i])*float64(countB[j])))
		}
	}
	h := entropy(countA, n) + entropy(countB, n)
	if h == 0 {
		return 0
	}
	// Rounding can leave I a hair below 0 or above the entropies.
	return math.Max(0, math.Min(1, 2*mi/h))
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
