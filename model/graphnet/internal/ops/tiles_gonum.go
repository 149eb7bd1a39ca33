//go:build !openblas

package ops

// Tiles of a product's result with gonum's pure-Go BLAS. Its Gemm computes
// a product of fewer than 4 blocks of 64×64 on the calling goroutine and a
// larger one on goroutines of its own, allocating their bookkeeping;
// tiles of at most 3 such blocks keep every product serial inside gonum,
// so that the pool alone decides the parallelism.
const (
	tileShort = 64
	tileLong  = 192
	minTiles  = 4 // below this many, tiles of tileShort × tileShort
)

// tileSizes returns the tile of an m × n result.
func tileSizes(m, n int) (tm, tn int) {
	tm, tn = tileShort, tileLong
	if m > n {
		tm, tn = tileLong, tileShort
	}
	if ceilDiv(m, tm)*ceilDiv(n, tn) < minTiles {
		tm, tn = tileShort, tileShort
	}
	return tm, tn
}
