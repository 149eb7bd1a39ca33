package connectivity

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Covariance returns the p × p sample covariance of the T × p series x (a
// row per time point, a column per region), with the maximum-likelihood
// divisor T:
//
//	S = (1/T) Σ_t (x_t − x̄)(x_t − x̄)ᵀ,  x̄ = (1/T) Σ_t x_t.
//
// The divisor T (not T − 1) is the one Ledoit & Wolf (2004) shrink; it
// does not change correlations. x must have at least one row.
func Covariance(x mat.Matrix) *mat.SymDense {
	xc := centred(x)
	T, p := xc.Dims()
	s := mat.NewSymDense(p, nil)
	s.SymOuterK(1/float64(T), xc.T())
	return s
}

// centred returns a copy of x with each column's mean subtracted.
func centred(x mat.Matrix) *mat.Dense {
	T, p := x.Dims()
	if T == 0 || p == 0 {
		panic("connectivity: empty series")
	}
	xc := mat.DenseCopyOf(x)
	for j := range p {
		var mean float64
		for t := range T {
			mean += xc.At(t, j)
		}
		mean /= float64(T)
		for t := range T {
			xc.Set(t, j, xc.At(t, j)-mean)
		}
	}
	return xc
}

// LedoitWolf returns the Ledoit–Wolf shrinkage estimate of the covariance
// of the T × p series x and its shrinkage intensity δ (Ledoit & Wolf
// 2004, "A well-conditioned estimator for large-dimensional covariance
// matrices", J. Multivariate Anal. 88, Lemma 3.2 and 3.3). With S the
// sample covariance (Covariance), x_t the centred time points and the
// scaled Frobenius norm ‖A‖² = tr(AAᵀ)/p,
//
//	μ  = tr(S)/p,
//	d² = ‖S − μI‖²,
//	b̄² = (1/T²) Σ_t ‖x_t x_tᵀ − S‖²,
//	b² = min(b̄², d²),
//	δ  = b²/d²  (0 when d² = 0),
//	Σ̂  = δ μ I + (1 − δ) S.
//
// Σ̂ is positive definite whenever μ > 0 and δ > 0, whatever T and p, which
// is why shrinkage makes partial correlations and tangent coordinates
// possible when T ≤ p.
func LedoitWolf(x mat.Matrix) (*mat.SymDense, float64) {
	xc := centred(x)
	T, p := xc.Dims()
	s := mat.NewSymDense(p, nil)
	s.SymOuterK(1/float64(T), xc.T())
	var trace, frob2 float64 // tr(S), ‖S‖²_F (unscaled)
	for i := range p {
		trace += s.At(i, i)
		for j := range p {
			v := s.At(i, j)
			frob2 += v * v
		}
	}
	mu := trace / float64(p)
	// Σ_t ‖x_t x_tᵀ − S‖²_F = Σ_t ‖x_t‖⁴ − T ‖S‖²_F, as Σ_t x_t x_tᵀ = T S.
	var fourth float64
	for t := range T {
		row := xc.RawRowView(t)
		var n2 float64
		for _, v := range row {
			n2 += v * v
		}
		fourth += n2 * n2
	}
	d2 := (frob2 - 2*mu*trace + float64(p)*mu*mu) / float64(p)
	b2 := (fourth/float64(T) - frob2) / (float64(T) * float64(p))
	b2 = max(0, min(b2, d2))
	delta := 0.0
	if d2 > 0 {
		delta = b2 / d2
	}
	out := mat.NewSymDense(p, nil)
	for i := range p {
		for j := i; j < p; j++ {
			v := (1 - delta) * s.At(i, j)
			if i == j {
				v += delta * mu
			}
			out.SetSym(i, j, v)
		}
	}
	return out, delta
}

// Correlation returns the Pearson correlation matrix of the covariance c:
//
//	r_ij = c_ij / sqrt(c_ii c_jj),  r_ii = 1.
//
// A region with c_ii ≤ 0 (a constant series) is an error naming its
// 0-based index (*VarianceError).
func Correlation(c mat.Symmetric) (*mat.SymDense, error) {
	p := c.SymmetricDim()
	sd := make([]float64, p)
	for i := range p {
		v := c.At(i, i)
		if !(v > 0) {
			return nil, &VarianceError{Region: i, Variance: v}
		}
		sd[i] = math.Sqrt(v)
	}
	r := mat.NewSymDense(p, nil)
	for i := range p {
		r.SetSym(i, i, 1)
		for j := i + 1; j < p; j++ {
			r.SetSym(i, j, c.At(i, j)/(sd[i]*sd[j]))
		}
	}
	return r, nil
}

// VarianceError reports a region whose variance is not positive.
type VarianceError struct {
	Region   int // 0-based index
	Variance float64
}

func (e *VarianceError) Error() string {
	return fmt.Sprintf("region %d has variance %g; a constant series has no correlation", e.Region+1, e.Variance)
}

// ErrNotPositiveDefinite is matched (errors.Is) by the errors of the
// functions that need a positive definite covariance when given one that
// is not, such as the sample covariance of T ≤ p time points.
var ErrNotPositiveDefinite = errors.New("matrix is not positive definite")

// PartialCorrelation returns the partial correlation matrix of the
// covariance c, from its precision matrix P = c⁻¹ (a Cholesky inverse):
//
//	ρ_ij = −P_ij / sqrt(P_ii P_jj)  (i ≠ j),  ρ_ii = 1,
//
// the correlation of regions i and j given every other region. c must be
// positive definite; otherwise the error wraps ErrNotPositiveDefinite.
func PartialCorrelation(c mat.Symmetric) (*mat.SymDense, error) {
	var ch mat.Cholesky
	if !ch.Factorize(c) {
		return nil, fmt.Errorf("partial correlation: covariance: %w", ErrNotPositiveDefinite)
	}
	var prec mat.SymDense
	if err := ch.InverseTo(&prec); err != nil {
		return nil, fmt.Errorf("partial correlation: inverting the covariance: %w", err)
	}
	p := c.SymmetricDim()
	r := mat.NewSymDense(p, nil)
	for i := range p {
		r.SetSym(i, i, 1)
		for j := i + 1; j < p; j++ {
			r.SetSym(i, j, -prec.At(i, j)/math.Sqrt(prec.At(i, i)*prec.At(j, j)))
		}
	}
	return r, nil
}
