//go:build !openblas

package lapack

import (
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/lapack/gonum"
)

// Name tells which LAPACK is in use: "gonum" (pure Go) or "openblas".
const Name = "gonum"

// reduce runs gonum's Dsytrd on the lower triangle: the reflectors sit
// below the subdiagonal, Q = H(0)·H(1)···H(n−2), as in LAPACK.
func reduce(t *Tridiagonal) {
	var impl gonum.Implementation
	n := t.N
	work := []float64{0}
	impl.Dsytrd(blas.Lower, n, t.a, t.lda, t.D, t.E, t.tau, work, -1)
	work = make([]float64, max(1, int(work[0])))
	impl.Dsytrd(blas.Lower, n, t.a, t.lda, t.D, t.E, t.tau, work, len(work))
}

// mulQ applies Q as LAPACK's dormtr does for a lower reduction: Dormqr
// with the n − 1 reflectors that start at row 1, on rows 1… of C.
func mulQ(t *Tridiagonal, trans bool, cols int, c []float64, ldc int) {
	var impl gonum.Implementation
	n := t.N
	tr := blas.NoTrans
	if trans {
		tr = blas.Trans
	}
	work := []float64{0}
	impl.Dormqr(blas.Left, tr, n-1, cols, n-1, t.a[t.lda:], t.lda, t.tau, c[ldc:], ldc, work, -1)
	work = make([]float64, max(1, int(work[0])))
	impl.Dormqr(blas.Left, tr, n-1, cols, n-1, t.a[t.lda:], t.lda, t.tau, c[ldc:], ldc, work, len(work))
}

// formQ overwrites q, which holds a copy of the reflectors, with Q.
func formQ(t *Tridiagonal, q []float64) {
	var impl gonum.Implementation
	n := t.N
	work := []float64{0}
	impl.Dorgtr(blas.Lower, n, q, n, t.tau, work, -1)
	work = make([]float64, max(1, int(work[0])))
	impl.Dorgtr(blas.Lower, n, q, n, t.tau, work, len(work))
}
