package linear

import (
	"context"
	"fmt"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// Ridge is ridge regression on connectome edges with an unpenalized
// intercept. For each score column y it minimizes
//
//	Σᵢ (yᵢ − b − x̃ᵢ·w)² + a‖w‖²
//
// over the n training participants whose score is present (train and
// valid together), where x̃ᵢ is participant i's edge vector (the upper
// triangle of the chosen connectome, see Edges) standardized with those
// participants' mean and population SD of each edge (or only centred);
// with standardize = "zscore" and a fixed penalty this is scikit-learn's
// StandardScaler followed by Ridge. The penalty a is chosen per column
// from the alphas grid by inner k-fold cross-validation, each inner fold
// standardizing with its own fitting rows; with alpha_scale = "relative",
// a = alpha · trace(K)/n, K = X̃X̃ᵀ the centred kernel of the n
// participants (for z-scored edges trace(K)/n is the number of
// non-constant edges). With inner = "loo" the penalty minimizes the mean
// squared leave-one-out error instead, computed exactly for every penalty
// with the edges standardized once on all n participants (see InnerLOO):
// scikit-learn's StandardScaler followed by RidgeCV with
// alpha_per_target.
//
// When participants are no more than edges, Ridge solves in the dual: one
// kernel K = X̃X̃ᵀ (a single symmetric product) and one Householder
// reduction K = QTQᵀ per inner fold give the solution at every penalty and
// for every column, (K + aI)⁻¹y = Q(T + aI)⁻¹Qᵀy with T tridiagonal; a
// penalty at or below n·ε·trace(K) takes the eigendecomposition instead,
// whose negligible components get no weight (a zero penalty is then the
// pseudo-inverse). With fewer edges than participants it solves in the
// primal through one SVD of X̃. Columns of Y missing the same scores share
// these factorizations (each other pattern costs its own), so Ridge is a
// model.ColumnWise: hundreds of permuted columns cost little more than one.
type Ridge struct {
	cfg  RidgeConfig
	seed int64

	p         int
	alphas    []float64      // chosen grid value per column
	train     *mat.Dense     // dual only: n × d raw training edges
	patterns  []ridgePattern // dual only
	dualCoef  *mat.Dense     // dual only: n × T, each column summing to zero, zero where a score is missing
	weights   *mat.Dense     // d × T on the raw edge scale; primal, or cached by Weights
	intercept []float64      // T, on the raw edge scale
}

// ridgePattern is what Predict needs of a missing-score pattern in the
// dual: its columns and the squared standardization factors of its rows.
// The raw-scale weights of column j are w = factorSq ∘ (Xᵀα̂ⱼ).
type ridgePattern struct {
	cols     []int
	factorSq []float64
}

// NewRidge returns an unfitted ridge model. cfg must be valid with its
// defaults set (see Config); seed drives the inner fold assignment.
func NewRidge(cfg RidgeConfig, seed int64) *Ridge { return &Ridge{cfg: cfg, seed: seed} }

// FitsColumnsIndependently marks Ridge as a model.ColumnWise.
func (*Ridge) FitsColumnsIndependently() {}

// Fit chooses each column's penalty by inner cross-validation over train
// and valid together and fits on them all. Each column is fitted on its
// present scores only, standardization included. A column with fewer than
// two present scores, a participant without the input connectome, or
// matrices of different sizes are errors.
func (r *Ridge) Fit(ctx context.Context, train, valid model.Dataset) error {
	ps, y, err := joinDatasets(train, valid)
	if err != nil {
		return err
	}
	// The edges are read from the participants' matrices as they are
	// needed, not copied into an n × d matrix.
	x, p, err := newEdgeRows(ps, r.cfg.Input, 0)
	if err != nil {
		return err
	}
	pats, err := missingPatterns(y, 2)
	if err != nil {
		return err
	}
	n, d := len(ps), x.width()
	_, t := y.Dims()
	zscore := r.cfg.Standardize == StandardizeZScore
	loo := r.cfg.Inner == InnerLOO && len(r.cfg.Alphas) > 1
	var foldOf []int
	if len(r.cfg.Alphas) > 1 && !loo {
		if foldOf, err = innerFolds(ps, *r.cfg.InnerFolds, r.seed, "model.ridge.inner_folds"); err != nil {
			return err
		}
	}
	// kbuf holds a kernel (dual) and buf standardized rows (primal only;
	// the dual standardizes a block of rows at a time, see stdGram), each
	// made when first needed and reused by every inner fold and pattern.
	var buf, kbuf *mat.Dense
	var blocks gramBuffers
	rowsBuf := func(m int) *mat.Dense {
		if buf == nil {
			buf = mat.NewDense(n, d, nil)
		}
		return buf.Slice(0, m, 0, d).(*mat.Dense)
	}
	// problem standardizes the rows fit and query with the statistics of
	// fit and factorizes the fit rows: in the dual through the kernel of
	// fit and query together (already centred, the edges being centred on
	// the fit rows; see kernelFold), in the primal through their SVD.
	problem := func(fit, query []int, penalties []float64) (foldProblem, error) {
		sc := fitScaler(x, fit, zscore)
		nf, m := len(fit), len(fit)+len(query)
		if !(nf <= d) {
			xs := rowsBuf(m)
			xf := sc.applyRows(xs.Slice(0, nf, 0, d).(*mat.Dense), x, fit)
			xq := sc.applyRows(xs.Slice(nf, m, 0, d).(*mat.Dense), x, query)
			return primalFold(xf, xq)
		}
		if kbuf == nil {
			kbuf = mat.NewDense(n, n, nil)
		}
		g := kbuf.Slice(0, m, 0, m).(*mat.Dense)
		blocks.stdGram(g, sc, x, append(slices.Clip(fit), query...))
		return kernelFold(g, nf, penalties)
	}

	r.p = p
	r.alphas = make([]float64, t)
	r.intercept = make([]float64, t)
	r.train, r.patterns, r.dualCoef, r.weights = nil, nil, nil, nil
	// In the dual with more columns than participants (a permutation
	// test's chunk), Predict works from the training edges and the dual
	// coefficients (n × d and n × T); otherwise from the weights (d × T).
	if n <= d && t > n {
		r.train = x.matrix()
		r.dualCoef = mat.NewDense(n, t, nil)
	} else {
		r.weights = mat.NewDense(d, t, nil)
	}
	for _, pat := range pats {
		sc := fitScaler(x, pat.rows, zscore)
		if sc.spread == 0 {
			return fmt.Errorf("linear: ridge: score column %d: every %s edge is constant over the participants with that score", pat.cols[0]+1, r.cfg.Input)
		}
		penalties := scalePenalties(r.cfg.Alphas, r.cfg.AlphaScale, sc.spread)
		best := make([]int, len(pat.cols))
		if !loo {
			if best, err = chooseCV(ctx, y, pat, foldOf, *r.cfg.InnerFolds, penalties, problem); err != nil {
				return fmt.Errorf("linear: ridge: %w", err)
			}
		}
		if err := ctx.Err(); err != nil {
			return err
		}
		np := len(pat.rows)
		yFit := subMatrix(y, pat.rows, pat.cols)
		means := centreColumns(yFit)
		dual := np <= d
		var k, xs *mat.Dense // dual: the kernel of the pattern's rows; primal: the rows
		var spec factor
		if dual {
			if kbuf == nil {
				kbuf = mat.NewDense(n, n, nil)
			}
			k = kbuf.Slice(0, np, 0, np).(*mat.Dense)
			blocks.stdGram(k, sc, x, pat.rows)
		} else {
			xs = sc.applyRows(rowsBuf(np), x, pat.rows)
		}
		if loo {
			// One factorization serves the choice and the fit.
			if dual {
				spec = reduceKernel(k)
			} else if spec, err = primalSpectrum(xs); err != nil {
				return err
			}
			if best, err = chooseLOO(ctx, spec, yFit, penalties); err != nil {
				return fmt.Errorf("linear: ridge: score column %d: %w", pat.cols[0]+1, err)
			}
		}
		colPenalty := make([]float64, len(pat.cols))
		for c, b := range best {
			r.alphas[pat.cols[c]] = r.cfg.Alphas[b]
			colPenalty[c] = penalties[b]
		}
		if spec == nil {
			if dual {
				spec, err = fitKernel(k, colPenalty)
			} else {
				spec, err = primalSpectrum(xs)
			}
			if err != nil {
				return err
			}
		}
		coef, err := spec.coefficients(spec.project(yFit), colPenalty)
		if err != nil {
			return fmt.Errorf("linear: ridge: score column %d: %w", pat.cols[0]+1, err)
		}
		if dual {
			centreColumns(coef) // Hα: the weights become Σᵢ α̂ᵢ xᵢ, free of the edge means
		}
		if dual && r.train != nil {
			alpha := coef
			factorSq := make([]float64, d)
			for k, f := range sc.factor {
				factorSq[k] = f * f
			}
			r.patterns = append(r.patterns, ridgePattern{cols: pat.cols, factorSq: factorSq})
			for c, j := range pat.cols {
				for a, i := range pat.rows {
					r.dualCoef.Set(i, j, alpha.At(a, c))
				}
			}
			// m·w for each column: Σᵢ α̂ᵢ xᵢ·(m ∘ f²) over the rows P.
			meanK := mat.NewDense(1, len(pat.rows), nil)
			for a, i := range pat.rows {
				var v float64
				for k, xk := range x.row(i) {
					v += xk * sc.mean[k] * factorSq[k]
				}
				meanK.Set(0, a, v)
			}
			var meanW mat.Dense // 1 × c
			meanW.Mul(meanK, alpha)
			for c, j := range pat.cols {
				r.intercept[j] = means[c] - meanW.At(0, c)
			}
			continue
		}
		w := coef // d × c weights on the standardized edges
		if dual {
			w = blocks.stdMulT(sc, x, pat.rows, coef) // X̃ᵀα̂
		}
		for c, j := range pat.cols {
			var mw float64
			for k := 0; k < d; k++ {
				wk := w.At(k, c) * sc.factor[k]
				r.weights.Set(k, j, wk)
				mw += sc.mean[k] * wk
			}
			r.intercept[j] = means[c] - mw
		}
	}
	return nil
}

// dualProblem factorizes the fitting kernel kff and expresses the query
// kernel kqf in its eigenvectors.
func dualProblem(kff, kqf mat.Matrix) (foldProblem, error) {
	spec, err := dualSpectrum(kff)
	if err != nil {
		return foldProblem{}, err
	}
	var qb mat.Dense
	qb.Mul(kqf, spec.basis)
	return foldProblem{spec: spec, queryBasis: &qb}, nil
}

// primalFold factorizes the standardized fitting rows xf (centred on
// their means) and expresses the query rows xq, standardized the same way,
// in the right singular vectors.
func primalFold(xf, xq *mat.Dense) (foldProblem, error) {
	spec, err := primalSpectrum(xf)
	if err != nil {
		return foldProblem{}, err
	}
	var qb mat.Dense
	qb.Mul(xq, spec.basis)
	return foldProblem{spec: spec, queryBasis: &qb}, nil
}

// scalePenalties returns the penalties of a grid: alphas themselves, or
// alphas times spread (the mean eigenvalue of the kernel) for "relative".
func scalePenalties(alphas []float64, scale AlphaScale, spread float64) []float64 {
	out := make([]float64, len(alphas))
	for i, a := range alphas {
		out[i] = a
		if scale == AlphaRelative {
			out[i] = a * spread
		}
	}
	return out
}

// Predict returns len(ps) × T predictions b + x·w on the raw edges x,
// which is the fitted b̃ + x̃·w̃ on edges standardized with the statistics
// of the training participants with each score.
func (r *Ridge) Predict(ps []*data.Participant) (*mat.Dense, error) {
	if r.intercept == nil {
		return nil, errNotFitted
	}
	if len(ps) == 0 {
		return nil, errNoParticipants
	}
	src, _, err := newEdgeRows(ps, r.cfg.Input, r.p)
	if err != nil {
		return nil, err
	}
	var pred mat.Dense
	if r.weights != nil {
		predictRows(&pred, src, r.weights, predictBytes)
		addToColumns(&pred, r.intercept)
		return &pred, nil
	}
	x := src.matrix()
	pred.ReuseAs(len(ps), len(r.intercept))
	scaled := mat.NewDense(len(ps), len(r.patterns[0].factorSq), nil)
	var kern, part mat.Dense
	for _, pat := range r.patterns {
		scaled.Apply(func(i, k int, v float64) float64 { return v * pat.factorSq[k] }, x)
		kern.Mul(scaled, r.train.T())
		part.Reset()
		part.Mul(&kern, subMatrix(r.dualCoef, nil, pat.cols))
		for c, j := range pat.cols {
			pred.SetCol(j, mat.Col(nil, c, &part))
		}
	}
	addToColumns(&pred, r.intercept)
	return &pred, nil
}

// predictBytes bounds the participants' edges predictRows holds at once.
const predictBytes = 64 << 20

// predictRows sets dst to x·w, len × T for the rows of x and the d × T
// weights w. When x's rows take at most limit bytes as float64 it forms
// them whole and multiplies once; otherwise a block of rows at a time of
// at most limit bytes (one row at least), so that predicting thousands of participants at
// tens of thousands of edges does not hold a second copy of them. Each
// entry is the same dot product either way (the products sum over the
// edges in the same order whatever the number of rows in the pure-Go
// build; OpenBLAS may round differently between blocked and whole).
func predictRows(dst *mat.Dense, x *edgeRows, w *mat.Dense, limit int) {
	n, d := len(x.ps), x.width()
	_, t := w.Dims()
	rows := max(1, limit/(8*max(d, 1)))
	if n <= rows {
		dst.Mul(x.matrix(), w)
		return
	}
	dst.ReuseAs(n, t)
	block := mat.NewDense(rows, d, nil)
	for i0 := 0; i0 < n; i0 += rows {
		i1 := min(i0+rows, n)
		b := block.Slice(0, i1-i0, 0, d).(*mat.Dense)
		for i := i0; i < i1; i++ {
			copy(b.RawRowView(i-i0), x.row(i))
		}
		dst.Slice(i0, i1, 0, t).(*mat.Dense).Mul(b, w)
	}
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

// Choices makes Ridge a model.Tuned: for each column of the last Fit, the
// penalty chosen from the alphas grid. It is nil before Fit and for a
// model read back from a folder, which keeps no grid.
func (r *Ridge) Choices() [][]model.Choice { return alphaChoices(r.cfg.Alphas, r.alphas) }

// alphaChoices returns, for each column, the choice of chosen[j] from the
// alphas grid; nil when either is.
func alphaChoices(grid, chosen []float64) [][]model.Choice {
	if chosen == nil || len(grid) == 0 {
		return nil
	}
	lo, hi := slices.Min(grid), slices.Max(grid)
	out := make([][]model.Choice, len(chosen))
	for j, a := range chosen {
		out[j] = []model.Choice{{Setting: "alphas", Value: a, Min: lo, Max: hi}}
	}
	return out
}

// Weights returns the fitted weights on the scale of the raw edges, d × T
// (d the number of input edges, in the order of Edges, functional before
// structural for input "both"): the prediction for edges x is
// Intercept()[j] + Σₖ x[k]·W[k, j]. In the dual they are w = D²Xᵀα̂ (D the
// standardization factors), which takes d × T memory; Weights computes
// them on first call and Predict then uses them. It returns nil before
// Fit. The caller must not modify the result.
func (r *Ridge) Weights() *mat.Dense {
	if r.intercept == nil {
		return nil
	}
	if r.weights == nil {
		d := len(r.patterns[0].factorSq)
		w := mat.NewDense(d, len(r.intercept), nil)
		var part mat.Dense
		for _, pat := range r.patterns {
			part.Mul(r.train.T(), subMatrix(r.dualCoef, nil, pat.cols))
			for c, j := range pat.cols {
				for k := 0; k < d; k++ {
					w.Set(k, j, part.At(k, c)*pat.factorSq[k])
				}
			}
			part.Reset()
		}
		r.weights, r.train, r.dualCoef, r.patterns = w, nil, nil, nil
	}
	return r.weights
}

// Intercept returns the fitted intercept of each column on the scale of
// the raw edges (see Weights), nil before Fit.
func (r *Ridge) Intercept() []float64 { return r.intercept }
