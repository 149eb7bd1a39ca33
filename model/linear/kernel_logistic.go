package linear

import (
	"context"
	"fmt"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// KernelLogistic is kernel logistic regression between participants' edge
// vectors, for a label of K classes. With K the n × n kernel of the
// training participants (train and valid together; the kernels of
// KernelRidge, "correlation" or "linear", neither centred nor
// standardized) it minimizes over the dual coefficients α (n × m) and the
// unpenalised intercepts b (m)
//
//	Σᵢ sᵢ·ℓᵢ(Kα + 1bᵀ) + λ/2·tr(αᵀKα)
//
// with sᵢ the class weight of participant i and ℓᵢ its cross-entropy in
// the model of Logistic: binary (m = 1, P(class 1) = σ(fᵢ)) for two
// classes, softmax (m = K) for more, fᵢ = bᵀ + (Kα)ᵢ. A participant x is
// predicted from f(x) = b + Σᵢ k(x, xᵢ)·αᵢ.
//
// Written in the features z = U·diag(√λ) of K = U·diag(λ)·Uᵀ (K = zzᵀ),
// with α = U·diag(1/√λ)·β, the objective is Σᵢ sᵢ·ℓᵢ(zβ + 1bᵀ) + λ/2·‖β‖²:
// logistic regression on z with C = 1/λ. So the fit is Logistic's
// L-BFGS on z (see kernelBasis), and with the linear kernel kernel
// logistic regression with penalty λ is logistic regression on the raw
// edges with C = 1/λ (the representer theorem: the optimal weights
// w = Xᵀα lie in the span of the training edges, where ‖w‖² = αᵀKα).
//
// The penalty is chosen from the alphas grid by inner k-fold
// cross-validation on log loss, folds stratified by class, as for
// Logistic; with alpha_scale = "relative", λ = alpha·trace(K)/n (1 for
// the correlation kernel).
type KernelLogistic struct {
	cfg     KernelLogisticConfig
	classes int
	seed    int64

	p         int
	alpha     float64    // the chosen grid value
	innerLoss []float64  // the inner log loss of each alpha; nil for one alpha
	train     *mat.Dense // n × d training edge vectors, normalized for "correlation"
	dualCoef  *mat.Dense // n × m
	intercept []float64  // m
	// primal is the d × m weights Xᵀα of a model read back by Load, which
	// keeps no training participants (train and dualCoef nil).
	primal    *mat.Dense
	converged bool
}

// NewKernelLogistic returns an unfitted kernel logistic regression for a
// label of classes ≥ 2 classes. cfg must be valid with its defaults set
// (see Config); seed drives the inner fold assignment.
func NewKernelLogistic(cfg KernelLogisticConfig, classes int, seed int64) *KernelLogistic {
	return &KernelLogistic{cfg: cfg, classes: classes, seed: seed}
}

// Fit chooses the penalty by inner cross-validation over train and valid
// together and fits on them all. The errors are those of Logistic.Fit,
// and a participant whose edges are all equal for the correlation kernel.
func (k *KernelLogistic) Fit(ctx context.Context, train, valid model.LabelledSet) error {
	const key = "model." + kindKernelLogistic
	ps, labels, err := joinLabelled(train, valid, k.classes, key)
	if err != nil {
		return err
	}
	if err := requireEveryClass(labels, k.classes, key); err != nil {
		return err
	}
	x, p, err := kernelEdges(ps, k.cfg.Input, k.cfg.Kernel, 0)
	if err != nil {
		return err
	}
	n := len(ps)
	kern := mat.NewDense(n, n, nil)
	gram(kern, x)
	spread := mat.Trace(kern) / float64(n)
	if spread == 0 {
		return fmt.Errorf("%s: every %s edge is zero for the training participants", key, k.cfg.Input)
	}
	lambdas := scalePenalties(k.cfg.Alphas, k.cfg.AlphaScale, spread)
	solver := solverSettings{maxIter: *k.cfg.MaxIter, tol: *k.cfg.Tol}
	best := 0
	k.innerLoss = nil
	if len(lambdas) > 1 {
		foldOf, err := stratifiedFolds(ps, labels, k.classes, *k.cfg.InnerFolds, k.seed, key+".inner_folds")
		if err != nil {
			return err
		}
		feats := func(fit, query []int) (zf, zq *mat.Dense, err error) {
			basis, err := newKernelBasis(subMatrix(kern, fit, fit))
			if err != nil {
				return nil, nil, err
			}
			return basis.z, basis.of(subMatrix(kern, query, fit)), nil
		}
		if best, k.innerLoss, err = choosePenalty(ctx, labels, k.classes, foldOf, *k.cfg.InnerFolds, lambdas,
			k.cfg.ClassWeight, solver, feats, key); err != nil {
			return fmt.Errorf("%s: %w", key, err)
		}
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	basis, err := newKernelBasis(kern)
	if err != nil {
		return err
	}
	lp := logitProblem{z: basis.z, labels: labels, weights: classWeights(labels, k.classes, k.cfg.ClassWeight),
		classes: k.classes, lambda: lambdas[best]}
	params, converged, err := lp.fit(nil, solver)
	if err != nil {
		return fmt.Errorf("%s: %w", key, err)
	}
	var alpha mat.Dense
	alpha.Mul(basis.proj, params.beta)
	k.p, k.alpha, k.converged = p, k.cfg.Alphas[best], converged
	k.train, k.dualCoef, k.primal = x, &alpha, nil
	k.intercept = slices.Clone(params.intercept)
	return nil
}

// PredictProba returns len(ps) × K class probabilities of the linear
// functions b + Σᵢ k(x, xᵢ)·αᵢ.
func (k *KernelLogistic) PredictProba(ps []*data.Participant) (*mat.Dense, error) {
	if k.intercept == nil {
		return nil, errNotFitted
	}
	if len(ps) == 0 {
		return nil, errNoParticipants
	}
	f, err := k.linearFunctions(ps)
	if err != nil {
		return nil, err
	}
	return probaOf(f, k.classes), nil
}

// linearFunctions returns the len(ps) × m linear functions
// b + Σᵢ k(x, xᵢ)·αᵢ of ps.
func (k *KernelLogistic) linearFunctions(ps []*data.Participant) (*mat.Dense, error) {
	x, _, err := kernelEdges(ps, k.cfg.Input, k.cfg.Kernel, k.p)
	if err != nil {
		return nil, err
	}
	var f mat.Dense
	if k.train == nil { // read back by Load
		f.Mul(x, k.primal)
	} else {
		var kern mat.Dense
		kern.Mul(x, k.train.T())
		f.Mul(&kern, k.dualCoef)
	}
	addToColumns(&f, k.intercept)
	return &f, nil
}

// Alpha returns the grid value of the penalty chosen by the last Fit
// (0 before Fit).
func (k *KernelLogistic) Alpha() float64 { return k.alpha }

// Choices returns the penalty chosen from the alphas grid by the last
// Fit, as one model.Choice for the label; nil before Fit and for a model
// read back from a folder.
func (k *KernelLogistic) Choices() [][]model.Choice {
	if k.intercept == nil || len(k.cfg.Alphas) == 0 {
		return nil
	}
	return alphaChoices(k.cfg.Alphas, []float64{k.alpha})
}

// Converged reports whether the last Fit's final L-BFGS run met tol
// before max_iter iterations.
func (k *KernelLogistic) Converged() bool { return k.converged }

// Weights returns the primal weights W = Xᵀα, d × m, in the space the
// kernel is linear in (the raw edges for "linear", the per-participant
// centred and unit-length edges for "correlation"): the linear function j
// of such a vector v is Intercept()[j] + v·W[:, j]. It returns nil before
// Fit.
func (k *KernelLogistic) Weights() *mat.Dense {
	if k.intercept == nil {
		return nil
	}
	if k.train == nil {
		return k.primal
	}
	var w mat.Dense
	w.Mul(k.train.T(), k.dualCoef)
	return &w
}

// Intercept returns the m fitted intercepts b (nil before Fit).
func (k *KernelLogistic) Intercept() []float64 { return k.intercept }
