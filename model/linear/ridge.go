package linear

import (
	"context"
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// Ridge is ridge regression on connectome edges with an unpenalized
// intercept. For each score column y it minimizes
//
//	Σᵢ (yᵢ − b − x̃ᵢ·w)² + a‖w‖²
//
// over the participants whose score is present, where x̃ᵢ is participant
// i's edge vector (the upper triangle of the chosen connectome, see
// Edges) standardized with the training fold's mean and SD of each edge.
// The penalty a is chosen per column from the alphas grid by inner k-fold
// cross-validation on the training fold (train and valid together), each
// inner fold standardizing with its own fitting rows; with alpha_scale =
// "relative", a = alpha · trace(K)/n with K the training fold's centred
// kernel (for z-scored edges, trace(K)/n is the number of non-constant
// edges).
//
// When participants are no more than edges, Ridge solves in the dual: one
// n × n kernel K = X̃X̃ᵀ (a single matrix product) and one eigendecomposition
// K = UΛUᵀ per inner fold and missing-score pattern give the solution at
// every penalty and for every column. With fewer edges than participants
// it solves in the primal through one SVD of X̃. Columns of Y with the
// same missing scores share their factorizations, so Ridge is a
// model.ColumnWise: hundreds of permuted columns cost little more than one.
type Ridge struct {
	cfg  RidgeConfig
	seed int64

	p         int        // regions of the training matrices
	scale     scaler     // edge standardization of the training fold
	alphas    []float64  // chosen grid value per column
	train     *mat.Dense // dual only: n × d standardized training edges
	dualCoef  *mat.Dense // dual only: n × T centred coefficients, zero where a score is missing
	weights   *mat.Dense // d × T on the standardized scale; primal, or cached by Weights
	intercept []float64  // T, on the standardized scale
}

// NewRidge returns an unfitted ridge model. cfg must be valid with its
// defaults set (see Config); seed drives the inner fold assignment.
func NewRidge(cfg RidgeConfig, seed int64) *Ridge { return &Ridge{cfg: cfg, seed: seed} }

// FitsColumnsIndependently marks Ridge as a model.ColumnWise.
func (*Ridge) FitsColumnsIndependently() {}

// Fit chooses each column's penalty by inner cross-validation over train
// and valid together and fits on them all. A column with fewer than two
// present scores, a participant without the input connectome, or matrices
// of different sizes are errors.
func (r *Ridge) Fit(ctx context.Context, train, valid model.Dataset) error {
	ps, y, err := joinDatasets(train, valid)
	if err != nil {
		return err
	}
	x, p, err := edgeMatrix(ps, r.cfg.Input, 0)
	if err != nil {
		return err
	}
	pats, err := missingPatterns(y, 2)
	if err != nil {
		return err
	}
	n, d := x.Dims()
	_, t := y.Dims()
	zscore := r.cfg.Standardize == StandardizeZScore
	final := fitScaler(x, seq(n), zscore)
	if final.spread == 0 {
		return fmt.Errorf("linear: ridge: every %s edge is constant over the training fold", r.cfg.Input)
	}
	penalties := scalePenalties(r.cfg.Alphas, r.cfg.AlphaScale, final.spread)
	dual := n <= d
	buf := mat.NewDense(n, d, nil)

	var best []int
	if len(penalties) > 1 {
		foldOf, err := innerFolds(ps, r.cfg.InnerFolds, r.seed, "model.ridge.inner_folds")
		if err != nil {
			return err
		}
		maker := func(foldRows []int) (func(fit, query []int) (foldProblem, error), error) {
			fitScaler(x, foldRows, zscore).apply(buf, x)
			if dual {
				var gram mat.Dense
				gram.Mul(buf, buf.T())
				return func(fit, query []int) (foldProblem, error) {
					kff, kqf := centredKernel(&gram, fit, query)
					return dualProblem(kff, kqf)
				}, nil
			}
			return func(fit, query []int) (foldProblem, error) {
				return primalProblem(buf, fit, query)
			}, nil
		}
		best, err = chooseCV(ctx, y, pats, foldOf, r.cfg.InnerFolds, penalties, maker)
		if err != nil {
			return fmt.Errorf("linear: ridge: %w", err)
		}
	} else {
		best = make([]int, t)
	}
	if err := ctx.Err(); err != nil {
		return err
	}

	xs := final.apply(buf, x)
	r.p, r.scale = p, final
	r.alphas = make([]float64, t)
	colPenalty := make([]float64, t)
	for j, b := range best {
		r.alphas[j] = r.cfg.Alphas[b]
		colPenalty[j] = penalties[b]
	}
	r.intercept = make([]float64, t)
	r.train, r.dualCoef, r.weights = nil, nil, nil
	if dual {
		var gram mat.Dense
		gram.Mul(xs, xs.T())
		r.train = xs
		r.dualCoef = mat.NewDense(n, t, nil)
		for _, pat := range pats {
			kff, _ := centredKernel(&gram, pat.rows, nil)
			spec, err := dualSpectrum(kff)
			if err != nil {
				return err
			}
			yFit := subMatrix(y, pat.rows, pat.cols)
			means := centreColumns(yFit)
			alpha := spec.coefficients(spec.project(yFit), pick(colPenalty, pat.cols))
			centreColumns(alpha) // Hα: the weights Σᵢ αᵢ(x̃ᵢ − m) become X̃ᵀ(Hα)
			var fitted mat.Dense // G[P, P] · Hα: x̃ᵢ·w for the fitting rows
			fitted.Mul(subMatrix(&gram, pat.rows, pat.rows), alpha)
			for c, j := range pat.cols {
				for a, i := range pat.rows {
					r.dualCoef.Set(i, j, alpha.At(a, c))
				}
				r.intercept[j] = means[c] - mat.Sum(fitted.ColView(c))/float64(len(pat.rows))
			}
		}
		return nil
	}
	r.weights = mat.NewDense(d, t, nil)
	for _, pat := range pats {
		xFit := subMatrix(xs, pat.rows, nil)
		edgeMeans := centreColumns(xFit)
		spec, err := primalSpectrum(xFit)
		if err != nil {
			return err
		}
		yFit := subMatrix(y, pat.rows, pat.cols)
		means := centreColumns(yFit)
		w := spec.coefficients(spec.project(yFit), pick(colPenalty, pat.cols))
		for c, j := range pat.cols {
			r.weights.SetCol(j, mat.Col(nil, c, w))
			r.intercept[j] = means[c] - mat.Dot(mat.NewVecDense(d, edgeMeans), w.ColView(c))
		}
	}
	return nil
}

// dualProblem factorizes the fitting kernel kff and expresses the query
// kernel kqf in its eigenvectors.
func dualProblem(kff, kqf *mat.Dense) (foldProblem, error) {
	spec, err := dualSpectrum(kff)
	if err != nil {
		return foldProblem{}, err
	}
	var qb mat.Dense
	qb.Mul(kqf, spec.basis)
	return foldProblem{spec: spec, queryBasis: &qb}, nil
}

// primalProblem centres the rows fit of x on their mean, factorizes them,
// and expresses the rows query, centred the same way, in the right
// singular vectors.
func primalProblem(x *mat.Dense, fit, query []int) (foldProblem, error) {
	xFit := subMatrix(x, fit, nil)
	edgeMeans := centreColumns(xFit)
	spec, err := primalSpectrum(xFit)
	if err != nil {
		return foldProblem{}, err
	}
	xQuery := subMatrix(x, query, nil)
	for i := range query {
		row := xQuery.RawRowView(i)
		for k := range row {
			row[k] -= edgeMeans[k]
		}
	}
	var qb mat.Dense
	qb.Mul(xQuery, spec.basis)
	return foldProblem{spec: spec, queryBasis: &qb}, nil
}

// scalePenalties returns the penalties of a grid: alphas themselves, or
// alphas times spread (the mean eigenvalue of the kernel) for "relative".
func scalePenalties(alphas []float64, scale string, spread float64) []float64 {
	out := make([]float64, len(alphas))
	for i, a := range alphas {
		out[i] = a
		if scale == AlphaRelative {
			out[i] = a * spread
		}
	}
	return out
}

func pick(values []float64, idx []int) []float64 {
	out := make([]float64, len(idx))
	for i, j := range idx {
		out[i] = values[j]
	}
	return out
}

// Predict returns len(ps) × T predictions b + x̃·w, the participants'
// edges standardized with the training fold's statistics.
func (r *Ridge) Predict(ps []*data.Participant) (*mat.Dense, error) {
	if r.intercept == nil {
		return nil, errNotFitted
	}
	if len(ps) == 0 {
		return nil, errNoParticipants
	}
	x, _, err := edgeMatrix(ps, r.cfg.Input, r.p)
	if err != nil {
		return nil, err
	}
	xs := r.scale.apply(nil, x)
	var pred mat.Dense
	if r.weights != nil {
		pred.Mul(xs, r.weights)
	} else {
		var k mat.Dense
		k.Mul(xs, r.train.T())
		pred.Mul(&k, r.dualCoef)
	}
	addToColumns(&pred, r.intercept)
	return &pred, nil
}

func addToColumns(m *mat.Dense, v []float64) {
	n, _ := m.Dims()
	for i := 0; i < n; i++ {
		row := m.RawRowView(i)
		for j := range row {
			row[j] += v[j]
		}
	}
}

// Alphas returns the grid value chosen for each column by the last Fit
// (nil before Fit).
func (r *Ridge) Alphas() []float64 { return r.alphas }

// Weights returns the fitted weights on the scale of the raw edges, d × T
// (d the number of input edges, in the order of Edges, functional before
// structural for input "both"): the prediction for edges x is
// Intercept()[j] + Σₖ x[k]·W[k, j]. In the dual they are w = X̃ᵀα, which
// takes d × T memory; Weights computes them on first call. It returns nil
// before Fit.
func (r *Ridge) Weights() *mat.Dense {
	if r.intercept == nil {
		return nil
	}
	if r.weights == nil {
		r.weights = new(mat.Dense)
		r.weights.Mul(r.train.T(), r.dualCoef)
	}
	d, t := r.weights.Dims()
	raw := mat.NewDense(d, t, nil)
	for k := 0; k < d; k++ {
		for j := 0; j < t; j++ {
			raw.Set(k, j, r.weights.At(k, j)*r.scale.factor[k])
		}
	}
	return raw
}

// Intercept returns the fitted intercept of each column on the scale of
// the raw edges (see Weights), nil before Fit.
func (r *Ridge) Intercept() []float64 {
	if r.intercept == nil {
		return nil
	}
	w := r.Weights()
	b := make([]float64, len(r.intercept))
	for j := range b {
		b[j] = r.intercept[j] - mat.Dot(mat.NewVecDense(len(r.scale.mean), r.scale.mean), w.ColView(j))
	}
	return b
}
