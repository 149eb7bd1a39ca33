package ops

// Tiles of a product's result. Both BLAS pack every tile's operands anew
// (OpenBLAS, and package internal/gemm in the pure-Go build), and OpenBLAS
// takes products below about a million multiply-adds through kernels that
// do not pack at all, so tiles are few and large: the longer side of the
// result is cut into about tilesAlongLonger pieces, none narrower than
// tileShort (columns of the second input, dW and dX gradients, are cut in
// multiples of 16 values).
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
