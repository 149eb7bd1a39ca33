//go:build openblas

package ops

// Tiles of a product's result with OpenBLAS. Every tile is packed anew,
// and OpenBLAS takes products below about a million multiply-adds through
// kernels that do not pack at all, so tiles are few and large: the
// longer side of the result is cut into about tilesAlongLonger pieces,
// none narrower than tileShort (columns of the second input, dW and dX
// gradients, are cut in multiples of 16 values).
const (
	tileShort        = 64
	tilesAlongLonger = 8
)

// tileSizes returns the tile of an m × n result.
func tileSizes(m, n int) (tm, tn int) {
	piece := func(l int) int { return max(tileShort, 16*ceilDiv(ceilDiv(l, tilesAlongLonger), 16)) }
	if m > n {
		return piece(m), n
	}
	return m, piece(n)
}

// gemmTile computes one tile of a product: OpenBLAS blocks it itself.
func gemmTile[T float](tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	gemm(tA, tB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
}
