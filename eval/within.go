package eval

import "math"

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
