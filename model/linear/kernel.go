package linear

import (
	"context"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// KernelRidge is kernel ridge regression between participants' edge
// vectors. For each score column y with mean ȳ over its present training
// scores it solves
//
//	(K + aI) α = y − ȳ
//
// on the present rows, with K the n × n kernel of the training
// participants, and predicts ȳ + Σᵢ k(x, xᵢ)αᵢ. The kernel is not centred
// and the edges are not standardized. With kernel = "linear",
// k(a, b) = a·b on the raw edges; with "correlation", k(a, b) is the
// Pearson correlation of the two edge vectors, which is the linear kernel
// of edge vectors centred and scaled to unit length per participant. The
// penalty is chosen per column from the alphas grid by inner k-fold
// cross-validation as in Ridge, sharing its machinery; with alpha_scale =
// "relative", a = alpha · trace(K)/n over the participants with the score
// (1 for the correlation kernel). There is no leave-one-out choice as in
// Ridge: the intercept ȳ is not fitted with the penalty, so removing a
// participant is not the rank-one update the shortcut assumes. He et
// al. (2020, NeuroImage) found this baseline as accurate as deep networks
// for predicting behaviour from functional connectivity.
type KernelRidge struct {
	cfg  KernelRidgeConfig
	seed int64

	p        int
	alphas   []float64
	train    *mat.Dense // n × d training edge vectors, normalized for "correlation"
	dualCoef *mat.Dense // n × T, zero where a score is missing
	means    []float64  // T training score means
	// primal is the d × T primal weights of a model read back by Load,
	// which keeps no training participants (train and dualCoef nil).
	primal *mat.Dense
}

// NewKernelRidge returns an unfitted kernel ridge model. cfg must be
// valid with its defaults set (see Config); seed drives the inner fold
// assignment.
func NewKernelRidge(cfg KernelRidgeConfig, seed int64) *KernelRidge {
	return &KernelRidge{cfg: cfg, seed: seed}
}

// FitsColumnsIndependently marks KernelRidge as a model.ColumnWise.
func (*KernelRidge) FitsColumnsIndependently() {}

// Fit chooses each column's penalty by inner cross-validation over train
// and valid together and fits on them all.
func (k *KernelRidge) Fit(ctx context.Context, train, valid model.Dataset) error {
	ps, y, err := joinDatasets(train, valid)
	if err != nil {
		return err
	}
	x, p, err := k.edges(ps, 0)
	if err != nil {
		return err
	}
	pats, err := missingPatterns(y, 2)
	if err != nil {
		return err
	}
	n, _ := x.Dims()
	_, t := y.Dims()
	kern := mat.NewDense(n, n, nil)
	gram(kern, x)
	var foldOf []int
	if len(k.cfg.Alphas) > 1 {
		if foldOf, err = innerFolds(ps, *k.cfg.InnerFolds, k.seed, "model.kernel_ridge.inner_folds"); err != nil {
			return err
		}
	}
	problem := func(fit, query []int, penalties []float64) (foldProblem, error) {
		rows := append(slices.Clip(fit), query...)
		return kernelFold(subMatrix(kern, rows, rows), len(fit), penalties)
	}
	k.p, k.train = p, x
	k.alphas = make([]float64, t)
	k.means = make([]float64, t)
	k.dualCoef = mat.NewDense(n, t, nil)
	for _, pat := range pats {
		kff := subMatrix(kern, pat.rows, pat.rows)
		spread := mat.Trace(kff) / float64(len(pat.rows))
		if spread == 0 {
			return fmt.Errorf("linear: kernel ridge: score column %d: every %s edge is zero for the participants with that score", pat.cols[0]+1, k.cfg.Input)
		}
		penalties := scalePenalties(k.cfg.Alphas, k.cfg.AlphaScale, spread)
		best, err := chooseCV(ctx, y, pat, foldOf, *k.cfg.InnerFolds, penalties, problem)
		if err != nil {
			return fmt.Errorf("linear: kernel ridge: %w", err)
		}
		if err := ctx.Err(); err != nil {
			return err
		}
		colPenalty := make([]float64, len(pat.cols))
		for c, b := range best {
			k.alphas[pat.cols[c]] = k.cfg.Alphas[b]
			colPenalty[c] = penalties[b]
		}
		spec, err := fitKernel(kff, colPenalty)
		if err != nil {
			return err
		}
		yFit := subMatrix(y, pat.rows, pat.cols)
		means := centreColumns(yFit)
		alpha, err := spec.coefficients(spec.project(yFit), colPenalty)
		if err != nil {
			return fmt.Errorf("linear: kernel ridge: score column %d: %w", pat.cols[0]+1, err)
		}
		for c, j := range pat.cols {
			k.means[j] = means[c]
			for a, i := range pat.rows {
				k.dualCoef.Set(i, j, alpha.At(a, c))
			}
		}
	}
	return nil
}

// edges returns the participants' edge vectors as kernelEdges does.
func (k *KernelRidge) edges(ps []*data.Participant, p int) (*mat.Dense, int, error) {
	return kernelEdges(ps, k.cfg.Input, k.cfg.Kernel, p)
}

// kernelEdges returns the participants' edge vectors of input (see
// edgeMatrix), for the correlation kernel centred and scaled to unit
// length per participant, so that the kernel is their dot product. A
// participant whose edges are all equal has no correlation with anyone and
// is an error.
func kernelEdges(ps []*data.Participant, input Input, kernel Kernel, p int) (*mat.Dense, int, error) {
	x, p, err := edgeMatrix(ps, input, p)
	if err != nil || kernel != KernelCorrelation {
		return x, p, err
	}
	n, _ := x.Dims()
	for i := 0; i < n; i++ {
		row := x.RawRowView(i)
		var mean float64
		for _, v := range row {
			mean += v
		}
		mean /= float64(len(row))
		var norm float64
		for j, v := range row {
			row[j] = v - mean
			norm += row[j] * row[j]
		}
		norm = math.Sqrt(norm)
		if norm <= 1e-12*math.Abs(mean)*math.Sqrt(float64(len(row))) || norm == 0 {
			return nil, p, fmt.Errorf("participant %q: every %s edge has the same value %v, so the correlation kernel is undefined", ps[i].ID, input, mean)
		}
		for j := range row {
			row[j] /= norm
		}
	}
	return x, p, nil
}

// Predict returns len(ps) × T predictions ȳ + Σᵢ k(x, xᵢ)αᵢ.
func (k *KernelRidge) Predict(ps []*data.Participant) (*mat.Dense, error) {
	if k.means == nil {
		return nil, errNotFitted
	}
	if len(ps) == 0 {
		return nil, errNoParticipants
	}
	x, _, err := k.edges(ps, k.p)
	if err != nil {
		return nil, err
	}
	var pred mat.Dense
	if k.train == nil { // read back by Load
		pred.Mul(x, k.primal)
	} else {
		var kern mat.Dense
		kern.Mul(x, k.train.T())
		pred.Mul(&kern, k.dualCoef)
	}
	addToColumns(&pred, k.means)
	return &pred, nil
}

// Alphas returns the grid value chosen for each column by the last Fit
// (nil before Fit).
func (k *KernelRidge) Alphas() []float64 { return k.alphas }

// Choices makes KernelRidge a model.Tuned: for each column of the last
// Fit, the penalty chosen from the alphas grid (nil before Fit).
func (k *KernelRidge) Choices() [][]model.Choice { return alphaChoices(k.cfg.Alphas, k.alphas) }

// Weights returns the primal weights w = Xᵀα, d × T, of the fitted model
// in the space the kernel is linear in: the raw edges for "linear", the
// per-participant centred and unit-length edges for "correlation". The
// prediction for such a vector z is Intercept()[j] + z·W[:, j]. It returns
// nil before Fit.
func (k *KernelRidge) Weights() *mat.Dense {
	if k.means == nil {
		return nil
	}
	if k.train == nil {
		return k.primal
	}
	var w mat.Dense
	w.Mul(k.train.T(), k.dualCoef)
	return &w
}

// Intercept returns the training score mean of each column, the
// intercept of the kernel model (nil before Fit).
func (k *KernelRidge) Intercept() []float64 { return k.means }
