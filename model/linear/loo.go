package linear

import (
	"context"
	"fmt"

	"gonum.org/v1/gonum/lapack/gonum"
	"gonum.org/v1/gonum/mat"
)

// chooseLOO returns, for every column of the centred scores yc (n × c),
// the index into penalties with the lowest mean squared leave-one-out
// error of ridge with an unpenalized intercept, from the one factor f of
// the n rows (a tridiagonal dual kernel, or the SVD of the centred edges).
// Leaving row i out of a linear smoother with hat matrix H changes its
// residual to
//
//	eᵢ = (yᵢ − ŷᵢ) / (1 − Hᵢᵢ)
//
// (Hastie, Tibshirani & Friedman, The Elements of Statistical Learning,
// 2nd ed., eq. 7.52; exact for ridge, whose intercept is the mean), with
// H = 11ᵀ/n + K(K + aI)⁻¹ for the centred kernel K, so that
// y − ŷ = a(K + aI)⁻¹yc and 1 − Hᵢᵢ = a[(K + aI)⁻¹]ᵢᵢ − 1/n. The edges'
// standardization is fitted once on all n rows, not per left-out row:
// this is what scikit-learn's RidgeCV computes after a StandardScaler.
// Penalties must be positive. Ties go to the earlier penalty.
func chooseLOO(ctx context.Context, f factor, yc *mat.Dense, penalties []float64) ([]int, error) {
	n, c := yc.Dims()
	sse := mat.NewDense(c, len(penalties), nil)
	proj := f.project(yc)
	r, _ := proj.Dims()
	resid := mat.NewDense(n, c, nil)
	hat := make([]float64, n) // 1 − Hᵢᵢ
	scaled := mat.NewDense(r, c, nil)
	var qt, z *mat.Dense // Qᵀ and Z, both n × n
	if tri, ok := f.(*tridiagonal); ok {
		qt = mat.NewDense(n, n, tri.t.Q())
		qt.Copy(mat.DenseCopyOf(qt.T()))
		z = mat.NewDense(n, n, nil)
	}
	same := make([]float64, c)
	for a, pen := range penalties {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		if !(pen > 0) {
			return nil, fmt.Errorf("leave-one-out needs positive penalties, found %g", pen)
		}
		for j := range same {
			same[j] = pen
		}
		switch f := f.(type) {
		case *tridiagonal:
			// (K + aI)⁻¹ = Q (T + aI)⁻¹ Qᵀ: its diagonal from Z = (T + aI)⁻¹Qᵀ.
			d, e, err := f.factorize(pen)
			if err != nil {
				return nil, err
			}
			z.Copy(qt)
			var impl gonum.Implementation
			impl.Dpttrs(n, n, d, e, z.RawMatrix().Data, n)
			for i := range hat {
				hat[i] = 0
			}
			for k := 0; k < n; k++ {
				qk, zk := qt.RawRowView(k), z.RawRowView(k)
				for i, v := range qk {
					hat[i] += v * zk[i]
				}
			}
			for i := range hat {
				hat[i] = pen*hat[i] - 1/float64(n)
			}
			if err := f.solve(scaled, proj, same); err != nil {
				return nil, err
			}
			resid.Mul(qt.T(), scaled)
			resid.Scale(pen, resid)
		case *spectrum:
			if !f.primal {
				panic("linear: leave-one-out on a dual spectrum")
			}
			// H = 11ᵀ/n + U diag(s²/(s² + a)) Uᵀ for the centred X = U S Vᵀ.
			shrink := make([]float64, r)
			for k := range shrink {
				shrink[k] = f.gain(k, pen) * f.values[k]
			}
			for i := range hat {
				row := f.left.RawRowView(i)
				h := 1 / float64(n)
				for k, u := range row {
					h += u * u * shrink[k]
				}
				hat[i] = 1 - h
			}
			for k := 0; k < r; k++ {
				src, dst := proj.RawRowView(k), scaled.RawRowView(k)
				for j, v := range src {
					dst[j] = shrink[k] * v
				}
			}
			resid.Mul(f.left, scaled)
			resid.Sub(yc, resid)
		}
		for i := 0; i < n; i++ {
			row := resid.RawRowView(i)
			for j, v := range row {
				e := v / hat[i]
				sse.Set(j, a, sse.At(j, a)+e*e)
			}
		}
	}
	best := make([]int, c)
	for j := range best {
		for a := range penalties {
			if sse.At(j, a) < sse.At(j, best[j]) {
				best[j] = a
			}
		}
	}
	return best, nil
}
