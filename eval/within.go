package eval

import (
	"fmt"
	"math"
)

// PearsonWithinFolds returns Pearson's r of the complete pairs of rows
// after centring each test fold on its own means: for the rows of repeat r
// and fold k,
//
//	ỹᵢ = yᵢ − ȳ_rk,  ŷ̃ᵢ = ŷᵢ − mean ŷ_rk,  r_within = Pearson(ỹ, ŷ̃),
//
// the means taken over the fold's complete pairs. It is the headline r of
// a cross-validated run. The plain pooled r of the same rows mixes in the
// differences between the folds' means: each fold's predictions carry its
// training mean, which is anti-correlated with the mean of its test
// scores (the two partition one sample), so pooled r is biased downwards,
// and negative for predictions that carry no information. Centring removes
// exactly that component and leaves the association inside the folds,
// where every model is tested. Within a single fold it equals Pearson's r.
//
// rows must hold one model and one target (the rows of one Group);
// predictions constant within every fold, such as the mean predictor's,
// give NaN, as does any set whose centred predictions are constant
// relative to the scores' spread (see Pearson).
func PearsonWithinFolds(rows []Prediction) float64 {
	obs, pred := centreWithinFolds(rows)
	return Pearson(obs, pred)
}

// centreWithinFolds returns the complete pairs of rows, each centred on
// its fold's means, in the order of rows.
func centreWithinFolds(rows []Prediction) (obs, pred []float64) {
	type fold struct{ repeat, fold int }
	type sums struct {
		obs, pred float64
		n         int
	}
	means := make(map[fold]*sums)
	for _, p := range rows {
		if math.IsNaN(p.Observed) || math.IsNaN(p.Predicted) {
			continue
		}
		k := fold{p.Repeat, p.Fold}
		s := means[k]
		if s == nil {
			s = &sums{}
			means[k] = s
		}
		s.obs += p.Observed
		s.pred += p.Predicted
		s.n++
	}
	obs = make([]float64, 0, len(rows))
	pred = make([]float64, 0, len(rows))
	for _, p := range rows {
		if math.IsNaN(p.Observed) || math.IsNaN(p.Predicted) {
			continue
		}
		s := means[fold{p.Repeat, p.Fold}]
		n := float64(s.n)
		obs = append(obs, p.Observed-s.obs/n)
		pred = append(pred, p.Predicted-s.pred/n)
	}
	return obs, pred
}

// AUCWithinFolds returns the area under the ROC curve of the class
// predictions rows over the pairs of a positive and a negative
// participant in the same test fold (same repeat and fold). For a binary
// label, class 1 positive and scored by its probability,
//
//	AUC_within = Σ_f U_f / Σ_f n₊_f · n₋_f,
//
// the sums over the test folds f of every repeat, U_f the Mann–Whitney
// count of fold f (its pairs in which the positive scores higher, a tie
// counting 1/2) and n₊_f, n₋_f its positives and negatives: the mean of
// the fold AUCs (ROCAUC) weighted by their numbers of pairs, n₊_f · n₋_f.
// For K > 2 classes it is the macro one-vs-rest average,
//
//	(1/K) Σₖ AUC_within(class k against the rest, scored by column k),
//
// as OneVsRestAUC averages pooled AUCs.
//
// It is the headline AUC of a cross-validated run. The plain AUC pooled
// over the folds ranks participants of different folds against each
// other, and each fold's probabilities carry its training fold's class
// frequencies, which are anti-correlated with those of its test fold (the
// two partition one sample): a test fold with few positives was trained
// on many, so it gives all its participants a higher probability of the
// positive class than a test fold with many positives does. Pooled AUC is
// therefore biased downwards, below 0.5 for predictions that carry no
// information, unless the folds are stratified on the label. Pairs within
// one fold compare predictions of one trained model, as ROCAUC of a
// single fold does, which removes exactly that component: the
// majority-class predictor, constant within each fold, gets exactly 0.5.
// Within a single fold it equals ROCAUC (OneVsRestAUC for K > 2).
//
// rows must hold one model and one label (the rows of one ClassGroup),
// each with the same number K ≥ 2 of probabilities, or it panics. Rows
// with a missing class (negative) or a NaN probability are skipped. It is
// NaN when no fold holds both a positive and a negative (for K > 2: when
// some class is in no fold beside another class).
func AUCWithinFolds(rows []ClassPrediction) float64 {
	type fold struct{ repeat, fold int }
	var folds []fold
	members := make(map[fold][]int)
	k := 0
rows:
	for i, r := range rows {
		if k == 0 {
			k = len(r.Probabilities)
		}
		if len(r.Probabilities) != k || k < 2 || r.Observed >= k {
			panic(fmt.Sprintf("eval: row %d has class %d and %d probabilities, want %d ≥ 2", i, r.Observed, len(r.Probabilities), k))
		}
		if r.Observed < 0 {
			continue
		}
		for _, v := range r.Probabilities {
			if math.IsNaN(v) {
				continue rows
			}
		}
		f := fold{r.Repeat, r.Fold}
		if _, ok := members[f]; !ok {
			folds = append(folds, f)
		}
		members[f] = append(members[f], i)
	}
	if len(folds) == 0 {
		return math.NaN()
	}
	within := func(class int) float64 {
		var u, pairs float64
		for _, f := range folds {
			idx := members[f]
			pos := make([]bool, len(idx))
			score := make([]float64, len(idx))
			for j, i := range idx {
				pos[j] = rows[i].Observed == class
				score[j] = rows[i].Probabilities[class]
			}
			fu, fp := mannWhitneyU(pos, score)
			u += fu
			pairs += fp
		}
		if pairs == 0 {
			return math.NaN()
		}
		return u / pairs
	}
	if k == 2 {
		return within(1)
	}
	var sum float64
	for class := range k {
		sum += within(class)
	}
	return sum / float64(k)
}
