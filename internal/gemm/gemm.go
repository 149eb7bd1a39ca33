package gemm

import (
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/gonum"
)

// Implementation is gonum's pure-Go BLAS (gonum.Implementation, embedded)
// with the blocked, packed Sgemm and Dgemm of this package. Its zero value
// is ready to use and it holds no state; it satisfies blas.Float32 and
// blas.Float64 and so can be given to blas32.Use, blas64.Use and
// gorgonia.Use.
type Implementation struct {
	gonum.Implementation
}

// Compile-time checks that Implementation is a full BLAS for both types.
var (
	_ blas.Float32 = Implementation{}
	_ blas.Float64 = Implementation{}
	_ blas.Float32 = Serial{}
	_ blas.Float64 = Serial{}
)

// Serial is Implementation with products that always run on the calling
// goroutine, whatever their size, for callers that spread tiles of a
// product over goroutines themselves. Its results are the same bits as
// Implementation's.
type Serial struct {
	Implementation
}

// SerialBelow is the number of multiply-adds, m·n·k, below which a product
// runs on the calling goroutine only. Larger products use up to
// runtime.GOMAXPROCS(0) goroutines.
const SerialBelow = 1 << 22

// Kernel names the micro-kernel in use: "avx2" (assembly, amd64 with AVX2
// and FMA) or "go" (plain Go).
func Kernel() string { return kernels64[0].name }

// Dgemm performs one of the matrix-matrix operations
//
//	C = alpha·A·B + beta·C
//	C = alpha·Aᵀ·B + beta·C
//	C = alpha·A·Bᵀ + beta·C
//	C = alpha·Aᵀ·Bᵀ + beta·C
//
// on row-major matrices, where op(A) is m×k, op(B) is k×n and C is m×n,
// with the contract of reference BLAS (and of gonum's Dgemm): tA and tB
// say whether A and B are transposed (blas.ConjTrans is blas.Trans); when
// beta is 0, C is not read (NaN in C is overwritten); when alpha is 0 or k
// is 0, A and B are not read. It panics, with gonum's messages, on a bad
// transpose, negative sizes, leading dimensions below the row length or
// slices too short.
func (Implementation) Dgemm(tA, tB blas.Transpose, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, beta float64, c []float64, ldc int) {
	check(tA, tB, m, n, k, lda, ldb, ldc, len(a), len(b), len(c))
	gemm(&kernels64[0], tA != blas.NoTrans, tB != blas.NoTrans, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc, true)
}

// Sgemm performs one of the matrix-matrix operations
//
//	C = alpha·A·B + beta·C
//	C = alpha·Aᵀ·B + beta·C
//	C = alpha·A·Bᵀ + beta·C
//	C = alpha·Aᵀ·Bᵀ + beta·C
//
// in float32, with the contract of Dgemm.
func (Implementation) Sgemm(tA, tB blas.Transpose, m, n, k int, alpha float32, a []float32, lda int, b []float32, ldb int, beta float32, c []float32, ldc int) {
	check(tA, tB, m, n, k, lda, ldb, ldc, len(a), len(b), len(c))
	gemm(&kernels32[0], tA != blas.NoTrans, tB != blas.NoTrans, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc, true)
}

// Dgemm is Implementation.Dgemm on the calling goroutine only.
func (Serial) Dgemm(tA, tB blas.Transpose, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, beta float64, c []float64, ldc int) {
	check(tA, tB, m, n, k, lda, ldb, ldc, len(a), len(b), len(c))
	gemm(&kernels64[0], tA != blas.NoTrans, tB != blas.NoTrans, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc, false)
}

// Sgemm is Implementation.Sgemm on the calling goroutine only.
func (Serial) Sgemm(tA, tB blas.Transpose, m, n, k int, alpha float32, a []float32, lda int, b []float32, ldb int, beta float32, c []float32, ldc int) {
	check(tA, tB, m, n, k, lda, ldb, ldc, len(a), len(b), len(c))
	gemm(&kernels32[0], tA != blas.NoTrans, tB != blas.NoTrans, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc, false)
}

// Panic messages, gonum's own (gonum.org/v1/gonum/blas/gonum/errors.go).
const (
	badTranspose = "blas: illegal transpose"
	mLT0         = "blas: m < 0"
	nLT0         = "blas: n < 0"
	kLT0         = "blas: k < 0"
	badLdA       = "blas: bad leading dimension of A"
	badLdB       = "blas: bad leading dimension of B"
	badLdC       = "blas: bad leading dimension of C"
	shortA       = "blas: insufficient length of a"
	shortB       = "blas: insufficient length of b"
	shortC       = "blas: insufficient length of c"
)

// check panics on arguments that gonum's Dgemm rejects, in its order.
func check(tA, tB blas.Transpose, m, n, k, lda, ldb, ldc, la, lb, lc int) {
	for _, t := range []blas.Transpose{tA, tB} {
		if t != blas.NoTrans && t != blas.Trans && t != blas.ConjTrans {
			panic(badTranspose)
		}
	}
	switch {
	case m < 0:
		panic(mLT0)
	case n < 0:
		panic(nLT0)
	case k < 0:
		panic(kLT0)
	}
	aTrans, bTrans := tA != blas.NoTrans, tB != blas.NoTrans
	if (aTrans && lda < max(1, m)) || (!aTrans && lda < max(1, k)) {
		panic(badLdA)
	}
	if (bTrans && ldb < max(1, k)) || (!bTrans && ldb < max(1, n)) {
		panic(badLdB)
	}
	if ldc < max(1, n) {
		panic(badLdC)
	}
	if m == 0 || n == 0 {
		return
	}
	if (aTrans && la < (k-1)*lda+m) || (!aTrans && la < (m-1)*lda+k) {
		panic(shortA)
	}
	if (bTrans && lb < (n-1)*ldb+k) || (!bTrans && lb < (k-1)*ldb+n) {
		panic(shortB)
	}
	if lc < (m-1)*ldc+n {
		panic(shortC)
	}
}
