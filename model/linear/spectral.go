package linear

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// A spectrum is one factorization of a ridge problem from which its
// solution at every penalty a follows with a diagonal scaling, so a grid
// of penalties and many score columns cost one factorization:
//
//	dual:   K = U diag(λ) Uᵀ (kernel of the n fitting rows, n × n);
//	        coefficients α(a) = U diag(1/(λ+a)) Uᵀ y (n × c)
//	primal: X = U diag(s) Vᵀ (thin SVD of the n × d fitting rows, d < n);
//	        weights w(a) = V diag(s/(s²+a)) Uᵀ y (d × c)
//
// Components whose λ or s is negligible (below r·eps times the largest,
// r the size) get gain zero, which makes a zero penalty the
// pseudo-inverse solution.
type spectrum struct {
	left   *mat.Dense // U: n × r
	basis  *mat.Dense // dual: U (n × r); primal: V (d × r)
	values []float64  // dual: λ; primal: s
	primal bool
	tol    float64 // values at or below tol are treated as zero
}

// dualSpectrum factorizes the symmetric n × n kernel k.
func dualSpectrum(k mat.Matrix) (*spectrum, error) {
	n, _ := k.Dims()
	sym := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			sym.SetSym(i, j, 0.5*(k.At(i, j)+k.At(j, i)))
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(sym, true) {
		return nil, errors.New("linear: eigendecomposition of the kernel did not converge")
	}
	s := &spectrum{left: new(mat.Dense), values: eig.Values(nil)}
	eig.VectorsTo(s.left)
	s.basis = s.left
	s.tol = float64(n) * 0x1p-52 * math.Abs(s.values[n-1])
	return s, nil
}

// primalSpectrum factorizes the n × d matrix x, d ≤ n.
func primalSpectrum(x *mat.Dense) (*spectrum, error) {
	n, d := x.Dims()
	var svd mat.SVD
	if !svd.Factorize(x, mat.SVDThin) {
		return nil, errors.New("linear: singular value decomposition of the edges did not converge")
	}
	s := &spectrum{left: new(mat.Dense), basis: new(mat.Dense), values: svd.Values(nil), primal: true}
	svd.UTo(s.left)
	svd.VTo(s.basis)
	if len(s.values) > 0 {
		s.tol = float64(max(n, d)) * 0x1p-52 * s.values[0]
	}
	return s, nil
}

// gain returns the factor of component i at penalty a.
func (s *spectrum) gain(i int, a float64) float64 {
	v := s.values[i]
	if v <= s.tol {
		return 0
	}
	if s.primal {
		return v / (v*v + a)
	}
	return 1 / (v + a)
}

// project returns Uᵀ y, r × c.
func (s *spectrum) project(y *mat.Dense) *mat.Dense {
	var proj mat.Dense
	proj.Mul(s.left.T(), y)
	return &proj
}

// solve sets dst[i, j] to gain(i, penalty[j])·proj[i, j].
func (s *spectrum) solve(dst, proj *mat.Dense, penalty []float64) error {
	r, _ := proj.Dims()
	for i := 0; i < r; i++ {
		src, out := proj.RawRowView(i), dst.RawRowView(i)
		for j, v := range src {
			out[j] = s.gain(i, penalty[j]) * v
		}
	}
	return nil
}

// coefficients returns basis · diag(gain(penalty[j])) · proj[:, j] for
// every column j of proj: α (n × c) in the dual, w (d × c) in the primal.
func (s *spectrum) coefficients(proj *mat.Dense, penalty []float64) (*mat.Dense, error) {
	r, c := proj.Dims()
	scaled := mat.NewDense(r, c, nil)
	if err := s.solve(scaled, proj, penalty); err != nil {
		return nil, err
	}
	var coef mat.Dense
	coef.Mul(s.basis, scaled)
	return &coef, nil
}

// A foldProblem is the ridge problem of one missing-score pattern inside
// one fold: the factor of its fitting rows and the query rows expressed
// in the factor's basis B (dual: centred query kernel × B; primal:
// centred query edges × V), queryBasis being len(query) × r.
type foldProblem struct {
	spec       factor
	queryBasis mat.Matrix
}

// chooseCV returns, for every column of pattern pat, the index into
// penalties with the lowest inner cross-validated mean squared error: each
// fold f holds out the pattern's rows with foldOf[row] == f, problem fits
// on the others and predicts the held-out rows, and the score of a penalty
// is the mean over folds of the fold's MSE (the mean of per-fold scores,
// as scikit-learn's GridSearchCV averages). A fold holding out none of the
// pattern's rows does not count. Ties go to the earlier penalty. y is the
// training pool's n × T scores.
func chooseCV(ctx context.Context, y *mat.Dense, pat pattern, foldOf []int, folds int, penalties []float64, problem func(fit, query []int, penalties []float64) (foldProblem, error)) ([]int, error) {
	best := make([]int, len(pat.cols))
	if len(penalties) == 1 {
		return best, nil
	}
	sumMSE := mat.NewDense(len(pat.cols), len(penalties), nil)
	counted := 0
	for f := 0; f < folds; f++ {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		var fit, query []int
		for _, i := range pat.rows {
			if foldOf[i] == f {
				query = append(query, i)
			} else {
				fit = append(fit, i)
			}
		}
		if len(query) == 0 {
			continue
		}
		if len(fit) < 2 {
			return nil, fmt.Errorf("inner fold %d: score column %d has %d scores to fit on, need at least 2", f+1, pat.cols[0]+1, len(fit))
		}
		prob, err := problem(fit, query, penalties)
		if err != nil {
			return nil, fmt.Errorf("inner fold %d: %w", f+1, err)
		}
		yFit := subMatrix(y, fit, pat.cols)
		means := centreColumns(yFit)
		yQuery := subMatrix(y, query, pat.cols)
		proj := prob.spec.project(yFit)
		r, c := proj.Dims()
		scaled := mat.NewDense(r, c, nil)
		var pred mat.Dense
		same := make([]float64, c)
		for a, pen := range penalties {
			for j := range same {
				same[j] = pen
			}
			if err := prob.spec.solve(scaled, proj, same); err != nil {
				return nil, fmt.Errorf("inner fold %d: %w", f+1, err)
			}
			pred.Mul(prob.queryBasis, scaled)
			for j := range pat.cols {
				var sse float64
				for i := range query {
					e := means[j] + pred.At(i, j) - yQuery.At(i, j)
					sse += e * e
				}
				sumMSE.Set(j, a, sumMSE.At(j, a)+sse/float64(len(query)))
			}
		}
		counted++
	}
	if counted == 0 {
		return nil, fmt.Errorf("score column %d: no inner fold holds out any of its scores", pat.cols[0]+1)
	}
	for j := range best {
		for a := range penalties {
			if sumMSE.At(j, a) < sumMSE.At(j, best[j]) {
				best[j] = a
			}
		}
	}
	return best, nil
}

// centreColumns subtracts each column's mean from y in place and returns
// the means.
func centreColumns(y *mat.Dense) []float64 {
	n, c := y.Dims()
	means := make([]float64, c)
	for j := 0; j < c; j++ {
		var sum float64
		for i := 0; i < n; i++ {
			sum += y.At(i, j)
		}
		means[j] = sum / float64(n)
		for i := 0; i < n; i++ {
			y.Set(i, j, y.At(i, j)-means[j])
		}
	}
	return means
}
