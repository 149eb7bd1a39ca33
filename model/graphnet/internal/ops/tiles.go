package ops

// Tiles of a product's result. internal/gemm packs every tile's operands
// anew, so tiles are few and large: the longer side of the
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
