//go:build !openblas

package ops

// Tiles of a product's result with gonum's pure-Go BLAS. Its Gemm computes
// a product of fewer than 4 blocks of 64×64 on the calling goroutine and a
// larger one on goroutines of its own, allocating their bookkeeping;
// tiles of at most 3 such blocks keep every product serial inside gonum,
// so that the pool alone decides the parallelism. gemmTile cuts the sum
// over k in slices as well (the serial kernels block nothing): measured
// at p = 116 on the reference network, slices of 256 to 1024 made an
// epoch 10–20% faster than none (and than gonum's own 64 × 64 × 64
// blocks, whose short vector loops cost more than they save).
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

// kSlice is how much of the sum over k one call of gonum's Gemm takes in
// gemmTile.
const kSlice = 512

// gemmTile computes one tile of a product in slices of kSlice along k
// (each adding to the last), so that the slice of the second operand a
// call reads stays in the cache while gonum's serial kernel sweeps it
// once for every row of the tile.
func gemmTile[T float](tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	if k <= kSlice {
		gemm(tA, tB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
		return
	}
	for l := 0; l < k; l += kSlice {
		var as, bs []T
		if tA {
			as = a[l*lda:]
		} else {
			as = a[l:]
		}
		if tB {
			bs = b[l:]
		} else {
			bs = b[l*ldb:]
		}
		sliceBeta := T(1) // later slices add to the first
		if l == 0 {
			sliceBeta = beta
		}
		gemm(tA, tB, m, n, min(kSlice, k-l), alpha, as, lda, bs, ldb, sliceBeta, c, ldc)
	}
}
