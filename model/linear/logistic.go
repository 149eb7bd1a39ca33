package linear

import (
	"context"
	"fmt"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// Logistic is L2-penalised logistic regression on connectome edges with
// an unpenalised intercept, for a label of K classes. Over the n training
// participants (train and valid together) with edge vectors x̃ᵢ
// standardized as in Ridge (the training participants' mean and
// population SD of each edge, or only centred) it minimizes
//
//	Σᵢ sᵢ·ℓᵢ + 1/(2C)·‖W‖²
//
// with sᵢ the class weight of participant i (1, or n/(K·n_k) for
// class_weight = "balanced") and ℓᵢ the cross-entropy of its class:
//
//   - K = 2, the binary logistic model: one weight vector w and intercept
//     b, P(class 1 | x̃) = σ(b + x̃·w) = 1/(1 + e^{−(b + x̃·w)}),
//     ℓᵢ = −yᵢ·log σ(fᵢ) − (1 − yᵢ)·log(1 − σ(fᵢ)), ‖W‖² = ‖w‖²;
//   - K > 2, the multinomial (softmax) model: one vector wₖ and
//     intercept bₖ per class, P(class k | x̃) = e^{fₖ}/Σⱼ e^{fⱼ},
//     fₖ = bₖ + x̃·wₖ, ℓᵢ = −log P(yᵢ | x̃ᵢ), ‖W‖² = Σₖ ‖wₖ‖².
//
// This is scikit-learn's StandardScaler followed by
// LogisticRegression(penalty="l2", C=C, solver="lbfgs", class_weight=...)
// in the parametrisation it uses (binary for two classes, multinomial for
// more; the softmax model with two classes would be the binary model with
// half the penalty). The penalty makes the softmax weights sum to zero
// over the classes; the intercepts are determined only up to a common
// shift, which changes no probability, and the fit (started from zero, its
// steps made of gradients, whose intercept parts sum to zero) returns
// them summing to zero.
//
// C is chosen from the cs grid by inner k-fold cross-validation over the
// training participants, folds stratified by class (and families kept
// whole): the lowest mean over folds of the held-out participants' mean
// log loss, each inner fold standardizing with, and weighting classes by,
// its own fitting participants (choosePenalty). The fit runs gonum's
// L-BFGS on the exact objective and gradient (divided by n, as
// scikit-learn's is) until no element of the gradient exceeds tol or
// after max_iter iterations.
//
// With no more participants than edges (the usual connectome) the
// problem is solved exactly in the n-dimensional span of the standardized
// training edges, where every solution lies: from the kernel
// K = X̃X̃ᵀ = U·diag(λ)·Uᵀ, features z = U·diag(√λ) replace the d edges
// and the weights are W = X̃ᵀ·U·diag(1/√λ)·β (see kernelBasis), so an
// iteration costs n·r instead of n·d.
type Logistic struct {
	cfg     LogisticConfig
	classes int
	seed    int64

	p         int
	c         float64    // the chosen C
	innerLoss []float64  // the inner log loss of each C; nil for one C
	weights   *mat.Dense // d × m on the raw edge scale
	intercept []float64  // m
	converged bool
}

// NewLogistic returns an unfitted logistic regression for a label of
// classes ≥ 2 classes. cfg must be valid with its defaults set (see
// Config); seed drives the inner fold assignment.
func NewLogistic(cfg LogisticConfig, classes int, seed int64) *Logistic {
	return &Logistic{cfg: cfg, classes: classes, seed: seed}
}

// Fit chooses C by inner cross-validation over train and valid together
// and fits on them all. A class without participants, a class with fewer
// participants than inner folds (when cs holds more than one C), a
// participant without the input connectome, or matrices of different
// sizes are errors.
func (l *Logistic) Fit(ctx context.Context, train, valid model.LabelledSet) error {
	const key = "model." + kindLogistic
	ps, labels, err := joinLabelled(train, valid, l.classes, key)
	if err != nil {
		return err
	}
	if err := requireEveryClass(labels, l.classes, key); err != nil {
		return err
	}
	x, p, err := newEdgeRows(ps, l.cfg.Input, 0)
	if err != nil {
		return err
	}
	zscore := l.cfg.Standardize == StandardizeZScore
	all := seq(len(ps))
	if fitScaler(x, all, zscore).spread == 0 {
		return fmt.Errorf("%s: every %s edge is constant over the training participants", key, l.cfg.Input)
	}
	solver := solverSettings{maxIter: *l.cfg.MaxIter, tol: *l.cfg.Tol}
	lambdas := make([]float64, len(l.cfg.Cs))
	for j, c := range l.cfg.Cs {
		lambdas[j] = 1 / c
	}
	var blocks gramBuffers
	best := 0
	l.innerLoss = nil
	if len(lambdas) > 1 {
		foldOf, err := stratifiedFolds(ps, labels, l.classes, *l.cfg.InnerFolds, l.seed, key+".inner_folds")
		if err != nil {
			return err
		}
		feats := func(fit, query []int) (zf, zq *mat.Dense, err error) {
			zf, zq, _, _, err = edgeDesign(&blocks, x, fit, query, zscore)
			return zf, zq, err
		}
		if best, l.innerLoss, err = choosePenalty(ctx, labels, l.classes, foldOf, *l.cfg.InnerFolds, lambdas,
			l.cfg.ClassWeight, solver, feats, key); err != nil {
			return fmt.Errorf("%s: %w", key, err)
		}
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	z, _, sc, toWeights, err := edgeDesign(&blocks, x, all, nil, zscore)
	if err != nil {
		return err
	}
	lp := logitProblem{z: z, labels: labels, weights: classWeights(labels, l.classes, l.cfg.ClassWeight),
		classes: l.classes, lambda: lambdas[best]}
	params, converged, err := lp.fit(nil, solver)
	if err != nil {
		return fmt.Errorf("%s: %w", key, err)
	}
	w := toWeights(params.beta) // d × m on the standardized edges
	l.p, l.c, l.converged = p, l.cfg.Cs[best], converged
	l.intercept = slices.Clone(params.intercept)
	for k, f := range sc.factor {
		row := w.RawRowView(k)
		for j := range row {
			row[j] *= f
			l.intercept[j] -= sc.mean[k] * row[j]
		}
	}
	l.weights = w
	return nil
}

// edgeDesign standardizes the edges of rows fit and query with the
// statistics of fit and returns the features of a logitProblem for them:
// the standardized edges themselves when fit has more rows than there
// are edges, otherwise the kernelBasis features of their kernel. toWeights
// maps the β of the features to weights on the standardized edges (d × m).
func edgeDesign(blocks *gramBuffers, x rowReader, fit, query []int, zscore bool) (zf, zq *mat.Dense, sc scaler, toWeights func(*mat.Dense) *mat.Dense, err error) {
	sc = fitScaler(x, fit, zscore)
	nf, d := len(fit), x.width()
	if nf > d {
		zf = sc.applyRows(mat.NewDense(nf, d, nil), x, fit)
		if len(query) > 0 {
			zq = sc.applyRows(mat.NewDense(len(query), d, nil), x, query)
		}
		return zf, zq, sc, func(beta *mat.Dense) *mat.Dense { return mat.DenseCopyOf(beta) }, nil
	}
	rows := append(slices.Clip(fit), query...)
	g := mat.NewDense(len(rows), len(rows), nil)
	blocks.stdGram(g, sc, x, rows)
	basis, err := newKernelBasis(g.Slice(0, nf, 0, nf))
	if err != nil {
		return nil, nil, sc, nil, err
	}
	if len(query) > 0 {
		zq = basis.of(g.Slice(nf, len(rows), 0, nf))
	}
	toWeights = func(beta *mat.Dense) *mat.Dense {
		var alpha mat.Dense
		alpha.Mul(basis.proj, beta)
		return blocks.stdMulT(sc, x, fit, &alpha)
	}
	return basis.z, zq, sc, toWeights, nil
}

// PredictProba returns len(ps) × K class probabilities of the raw edges x:
// those of the linear functions b + x·W.
func (l *Logistic) PredictProba(ps []*data.Participant) (*mat.Dense, error) {
	if l.weights == nil {
		return nil, errNotFitted
	}
	if len(ps) == 0 {
		return nil, errNoParticipants
	}
	f, err := l.linearFunctions(ps)
	if err != nil {
		return nil, err
	}
	return probaOf(f, l.classes), nil
}

// linearFunctions returns the len(ps) × m linear functions b + x·W of the
// raw edges x of ps.
func (l *Logistic) linearFunctions(ps []*data.Participant) (*mat.Dense, error) {
	x, _, err := edgeMatrix(ps, l.cfg.Input, l.p)
	if err != nil {
		return nil, err
	}
	var f mat.Dense
	f.Mul(x, l.weights)
	addToColumns(&f, l.intercept)
	return &f, nil
}

// C returns the C chosen by the last Fit (0 before Fit).
func (l *Logistic) C() float64 { return l.c }

// Choices returns the C chosen from the cs grid by the last Fit, as one
// model.Choice for the label; nil before Fit and for a model read back
// from a folder, which keeps no grid.
func (l *Logistic) Choices() [][]model.Choice {
	if l.weights == nil || len(l.cfg.Cs) == 0 {
		return nil
	}
	return [][]model.Choice{{{Setting: "cs", Value: l.c, Min: slices.Min(l.cfg.Cs), Max: slices.Max(l.cfg.Cs)}}}
}

// Converged reports whether the last Fit's final L-BFGS run met tol
// before max_iter iterations.
func (l *Logistic) Converged() bool { return l.converged }

// Weights returns the fitted weights on the scale of the raw edges,
// d × m (d input edges in the order of Edges, functional before
// structural for input "both"; m = 1 for two classes, K otherwise): the
// linear function j of edges x is Intercept()[j] + Σₖ x[k]·W[k, j]. It
// returns nil before Fit. The caller must not modify the result.
func (l *Logistic) Weights() *mat.Dense { return l.weights }

// Intercept returns the m fitted intercepts on the scale of the raw edges
// (see Weights), nil before Fit.
func (l *Logistic) Intercept() []float64 { return l.intercept }
