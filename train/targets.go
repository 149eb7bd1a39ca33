package train

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// TargetPrep is everything about the scores that is fitted on a training
// fold and then applied, unchanged, to both sides of the fold: the
// regression of confounds out of every score (cross-validated confound
// regression, Snoek, Miletić & Scholte 2019) and the standardization of
// the residual scores.
//
// For target t and participant i with covariates c_i, the model learns
//
//	z_it = (y_it − β_t·[1, c_i] − μ_t) / σ_t
//
// where β_t is the least-squares fit of y_t on [1, c] over the training
// rows (β_t = 0 without confounds) and μ_t, σ_t are the mean and SD of the
// residuals over the training rows. Missing scores (NaN) are left out of
// every fit; a missing covariate is replaced by its training mean.
//
// A TargetPrep fitted in B blocks (FitTargetPrepBlocks) holds B
// independent problems side by side, as a permutation test fits them: y
// has T·B columns and cov C·B, and target column t is regressed on
// covariate block b = t / T only (columns b·C to b·C + C − 1), so c_i
// above is participant i's covariates of block b.
type TargetPrep struct {
	// Confounds holds (1 + C) × T coefficients, row 0 the intercept; nil
	// without confound regression. Fitted in blocks, row 1 + c of target
	// column t belongs to covariate c of the target's block.
	Confounds *mat.Dense `json:"-"`
	// CovariateMean holds the training means of the confound columns
	// (C, or C·B fitted in blocks), used to fill missing covariates.
	CovariateMean []float64 `json:"covariate_mean,omitempty"`
	// Mean and SD standardize each target's residuals.
	Mean []float64 `json:"mean"`
	SD   []float64 `json:"sd"`

	// blocks is B of FitTargetPrepBlocks; 0 means 1.
	blocks int
}

// FitTargetPrep fits a TargetPrep on the given rows of y (n × T, NaN where
// missing) and cov (n × C confound columns; nil for none). It is
// FitTargetPrepBlocks with one block.
func FitTargetPrep(y, cov *mat.Dense, rows []int) (*TargetPrep, error) {
	return FitTargetPrepBlocks(y, cov, rows, 1)
}

// FitTargetPrepBlocks fits a TargetPrep on the given rows of y (n × T·B,
// NaN where missing) and cov (n × C·B; nil for none) made of B blocks side
// by side: target column t is regressed on covariate columns b·C to
// b·C + C − 1 with b = t / T, and standardized on its own. The result is
// that of B separate FitTargetPrep calls, one per block, with their
// columns side by side; B = 1 is FitTargetPrep. It is how a permutation
// test fits a chunk of permutations at once, each with its own permuted
// covariates. The number of columns of y and of cov must be multiples of
// blocks.
func FitTargetPrepBlocks(y, cov *mat.Dense, rows []int, blocks int) (*TargetPrep, error) {
	_, T := y.Dims()
	if blocks < 1 || T%blocks != 0 {
		return nil, fmt.Errorf("%d score columns do not make %d blocks", T, blocks)
	}
	tp := &TargetPrep{Mean: make([]float64, T), SD: make([]float64, T), blocks: blocks}
	if cov != nil {
		if _, C := cov.Dims(); C%blocks != 0 {
			return nil, fmt.Errorf("%d confound columns do not make %d blocks", C, blocks)
		}
		if err := tp.fitConfounds(y, cov, rows); err != nil {
			return nil, err
		}
	}
	for t := 0; t < T; t++ {
		var sum, sumSq float64
		var n int
		for _, i := range rows {
			v := tp.residual(y, cov, i, t)
			if math.IsNaN(v) {
				continue
			}
			sum += v
			n++
		}
		if n < 2 {
			return nil, fmt.Errorf("target %d: %d training scores, need at least 2", t, n)
		}
		mean := sum / float64(n)
		for _, i := range rows {
			if v := tp.residual(y, cov, i, t); !math.IsNaN(v) {
				sumSq += (v - mean) * (v - mean)
			}
		}
		sd := math.Sqrt(sumSq / float64(n-1))
		if sd == 0 {
			return nil, fmt.Errorf("target %d: every training score is the same", t)
		}
		tp.Mean[t], tp.SD[t] = mean, sd
	}
	return tp, nil
}

func (tp *TargetPrep) fitConfounds(y, cov *mat.Dense, rows []int) error {
	_, T := y.Dims()
	_, CB := cov.Dims()
	C := CB / tp.numBlocks()
	tp.CovariateMean = make([]float64, CB)
	for c := 0; c < CB; c++ {
		var sum float64
		var n int
		for _, i := range rows {
			if v := cov.At(i, c); !math.IsNaN(v) {
				sum += v
				n++
			}
		}
		if n == 0 {
			return fmt.Errorf("confound %d: no training participant has a value", c)
		}
		tp.CovariateMean[c] = sum / float64(n)
	}
	tp.Confounds = mat.NewDense(1+C, T, nil)
	for t := 0; t < T; t++ {
		var present []int
		for _, i := range rows {
			if !math.IsNaN(y.At(i, t)) {
				present = append(present, i)
			}
		}
		if len(present) <= C+1 {
			return fmt.Errorf("target %d: %d training scores for %d confounds", t, len(present), C)
		}
		design := mat.NewDense(len(present), 1+C, nil)
		obs := mat.NewVecDense(len(present), nil)
		first := tp.firstCovariate(t, T)
		for r, i := range present {
			design.Set(r, 0, 1)
			for c := 0; c < C; c++ {
				design.Set(r, 1+c, tp.covariate(cov, i, first+c))
			}
			obs.SetVec(r, y.At(i, t))
		}
		var beta mat.VecDense
		if err := beta.SolveVec(design, obs); err != nil {
			return fmt.Errorf("target %d: confound regression: %w", t, err)
		}
		tp.Confounds.SetCol(t, beta.RawVector().Data)
	}
	return nil
}

func (tp *TargetPrep) numBlocks() int { return max(1, tp.blocks) }

// firstCovariate returns the first covariate column of the block of
// target column t of T.
func (tp *TargetPrep) firstCovariate(t, T int) int {
	B := tp.numBlocks()
	return t / (T / B) * (len(tp.CovariateMean) / B)
}

func (tp *TargetPrep) covariate(cov *mat.Dense, i, c int) float64 {
	if v := cov.At(i, c); !math.IsNaN(v) {
		return v
	}
	return tp.CovariateMean[c]
}

// residual returns y_it minus its confound fit.
func (tp *TargetPrep) residual(y, cov *mat.Dense, i, t int) float64 {
	v := y.At(i, t)
	if tp.Confounds == nil || math.IsNaN(v) {
		return v
	}
	C := len(tp.CovariateMean) / tp.numBlocks()
	first := tp.firstCovariate(t, len(tp.Mean))
	v -= tp.Confounds.At(0, t)
	for c := 0; c < C; c++ {
		v -= tp.Confounds.At(1+c, t) * tp.covariate(cov, i, first+c)
	}
	return v
}

// Observed returns the rows' scores in score units with the confound fit
// removed: what the models' predictions are compared with.
func (tp *TargetPrep) Observed(y, cov *mat.Dense, rows []int) *mat.Dense {
	_, T := y.Dims()
	out := mat.NewDense(len(rows), T, nil)
	for r, i := range rows {
		for t := 0; t < T; t++ {
			out.Set(r, t, tp.residual(y, cov, i, t))
		}
	}
	return out
}

// Standardized returns the rows' scores as the models learn them.
func (tp *TargetPrep) Standardized(y, cov *mat.Dense, rows []int) *mat.Dense {
	out := tp.Observed(y, cov, rows)
	r, T := out.Dims()
	for i := 0; i < r; i++ {
		for t := 0; t < T; t++ {
			out.Set(i, t, (out.At(i, t)-tp.Mean[t])/tp.SD[t])
		}
	}
	return out
}

// Unstandardize turns standardized predictions back into score units, in
// place.
func (tp *TargetPrep) Unstandardize(pred *mat.Dense) {
	r, T := pred.Dims()
	for i := 0; i < r; i++ {
		for t := 0; t < T; t++ {
			pred.Set(i, t, pred.At(i, t)*tp.SD[t]+tp.Mean[t])
		}
	}
}
