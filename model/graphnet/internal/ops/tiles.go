package ops

// Tiles of a product's result. internal/gemm packs every tile's operands
// anew, so tiles are few and large: the longer side of the
// result is cut into about tilesAlongLonger pieces, none narrower than
// tileShort, in multiples of tileUnit values (the widest micro-kernel
// tile of internal/gemm, 32 float32 columns, so that no tile leaves
// internal/gemm a partial panel to pack value by value).
const (
	tileShort        = 64
	tilesAlongLonger = 8
	tileUnit         = 32
)

// tileSizes returns the tile of an m × n result.
func tileSizes(m, n int) (tm, tn int) {
	piece := func(l int) int { return max(tileShort, tileUnit*ceilDiv(ceilDiv(l, tilesAlongLonger), tileUnit)) }
	if m > n {
		return piece(m), n
	}
	return m, piece(n)
}
