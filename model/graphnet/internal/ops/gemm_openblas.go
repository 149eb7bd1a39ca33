//go:build openblas

package ops

import (
	"gonum.org/v1/gonum/blas/blas32"
	"gonum.org/v1/gonum/blas/blas64"
)

// gemm computes C = alpha·op(A)·op(B) + beta·C on row-major slices, with
// op(A) m×k and op(B) k×n, through blas64/blas32, which package internal/blas
// sets to OpenBLAS in this build.
func gemm[T float](tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	if m == 0 || n == 0 {
		return
	}
	if is64[T]() {
		blas64.Implementation().Dgemm(trans(tA), trans(tB), m, n, k, float64(alpha), as64(a), lda, as64(b), ldb, float64(beta), as64(c), ldc)
		return
	}
	blas32.Implementation().Sgemm(trans(tA), trans(tB), m, n, k, float32(alpha), as32(a), lda, as32(b), ldb, float32(beta), as32(c), ldc)
}

// gemmTile computes one tile of a product: OpenBLAS blocks it itself.
func gemmTile[T float](tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	gemm(tA, tB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
}

// serialGemm is gemm tile by tile on the calling goroutine.
func serialGemm[T float](tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	t := newGemmTask(tA, tB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
	t.serial()
}

// serial computes every tile on the calling goroutine: the product inside
// a chunk of another task.
func (t *gemmTask[T]) serial() {
	for i := range t.tiles() {
		t.Chunk(i)
	}
}
