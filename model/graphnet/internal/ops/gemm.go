package ops

import "github.com/skein-neuro/skein/internal/gemm"

// gemmTile computes one tile of a product on the calling goroutine with
// the pure-Go BLAS of package internal/gemm, in every build: on the
// network's shapes (a few hundred to a few thousand along each side) it
// is as fast as OpenBLAS, its Serial never starts goroutines of its own,
// so the op's pool alone decides the parallelism, and a tile allocates
// nothing (a cgo call to OpenBLAS costs a switch of stacks per tile, and
// OpenBLAS's single-threaded products left both builds slower than the
// pure-Go one).
func gemmTile[T float](tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	if m == 0 || n == 0 {
		return
	}
	if is64[T]() {
		gemm.Serial{}.Dgemm(trans(tA), trans(tB), m, n, k, float64(alpha), as64(a), lda, as64(b), ldb, float64(beta), as64(c), ldc)
		return
	}
	gemm.Serial{}.Sgemm(trans(tA), trans(tB), m, n, k, float32(alpha), as32(a), lda, as32(b), ldb, float32(beta), as32(c), ldc)
}

// serialGemm is gemm on the calling goroutine, in one piece: internal/gemm
// blocks the product itself, and packs each block of an operand once
// where tiles would pack it once per tile. Every element is the same sum
// either way.
func serialGemm[T float](tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	gemmTile(tA, tB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
}
