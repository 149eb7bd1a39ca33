// Package lapack holds the few LAPACK routines skein's ridge baselines
// use, in one place: gonum's pure-Go implementation by default, or the
// LAPACK that Debian's OpenBLAS library carries (through cgo) when built
// with the openblas build tag, as package internal/blas does for the BLAS:
//
//	CGO_LDFLAGS=-lopenblas go build -tags openblas ./...
//
// Its one type is Tridiagonal, the Householder reduction A = Q·T·Qᵀ of a
// symmetric matrix (LAPACK's dsytrd, dormtr and dorgtr). All matrices are
// row-major, as in gonum.
package lapack

import "math"

// Tridiagonal is the reduction A = Q·T·Qᵀ of a symmetric n × n matrix A,
// with T symmetric tridiagonal (diagonal D, off-diagonal E) and Q
// orthogonal, held as n − 1 Householder reflectors (Golub & Van Loan,
// Matrix Computations, 4th ed., §8.3.1). Its cost is about 4n³/3 flops,
// against about 9n³ for the eigenvectors of A by the QR algorithm. How Q is
// stored depends on the build; only MulQ and Q read it.
type Tridiagonal struct {
	// N is the order of A.
	N int
	// D (length N) and E (length N − 1) are the diagonal and the
	// off-diagonal of T.
	D, E []float64

	a   []float64 // the reflectors, in the lower triangle of an N × N matrix
	lda int
	tau []float64
}

// Reduce returns the reduction of the symmetric n × n matrix held in a
// (row-major, stride lda ≥ n; both triangles must hold A). It overwrites
// the lower triangle of a with the reflectors and keeps a: the caller must
// not change the lower triangle while it uses the result. The strict upper
// triangle is not touched. It panics if a is too short.
func Reduce(n int, a []float64, lda int) *Tridiagonal {
	if n < 0 || lda < max(1, n) || (n > 0 && len(a) < (n-1)*lda+n) {
		panic("lapack: bad dimensions in Reduce")
	}
	t := &Tridiagonal{N: n, D: make([]float64, n), E: make([]float64, max(n-1, 0), max(n-1, 1)), a: a, lda: lda, tau: make([]float64, max(n-1, 1))}
	if n > 0 {
		reduce(t)
	}
	return t
}

// MulQ sets the n × cols matrix C (row-major, stride ldc ≥ cols) to Q·C,
// or to Qᵀ·C when trans is true. It panics if c is too short.
func (t *Tridiagonal) MulQ(trans bool, cols int, c []float64, ldc int) {
	if cols < 0 || ldc < max(1, cols) || (t.N > 0 && cols > 0 && len(c) < (t.N-1)*ldc+cols) {
		panic("lapack: bad dimensions in MulQ")
	}
	if t.N < 2 || cols == 0 {
		return
	}
	mulQ(t, trans, cols, c, ldc)
}

// Q returns Q as a new n × n row-major matrix (stride n). It leaves the
// reflectors as they were.
func (t *Tridiagonal) Q() []float64 {
	n := t.N
	q := make([]float64, n*n)
	for i := 0; i < n; i++ {
		copy(q[i*n:i*n+i+1], t.a[i*t.lda:i*t.lda+i+1])
	}
	if n > 0 {
		formQ(t, q)
	}
	return q
}

// Norm returns the largest absolute row sum of T, a bound on the largest
// absolute eigenvalue of A.
func (t *Tridiagonal) Norm() float64 {
	var norm float64
	for i, d := range t.D {
		s := math.Abs(d)
		if i > 0 {
			s += math.Abs(t.E[i-1])
		}
		if i < len(t.E) {
			s += math.Abs(t.E[i])
		}
		norm = max(norm, s)
	}
	return norm
}
