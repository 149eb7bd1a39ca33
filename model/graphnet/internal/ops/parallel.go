package ops

import (
	"github.com/skein-neuro/skein/internal/parallel"
)

// Every op runs its products tile by tile, and its elementwise loops
// sample by sample, as the chunks of a parallel.Task on the pool given by
// WithPool. The tiles and chunks depend on the shapes alone, never on the
// number of goroutines, so results are the same with any pool (or none).

// WithPool makes the op, and the ops of its gradient, run their chunks
// on pool. Without it (or with a nil pool) they run on the calling
// goroutine. Every op accepts it.
func WithPool(pool *parallel.Pool) Option { return func(o *options) { o.pool = pool } }

// gemmTask is one product C = alpha·op(A)·op(B) + beta·C on row-major
// slices (op(A) m×k, op(B) k×n), split into tiles of C.
type gemmTask[T float] struct {
	tA, tB     bool
	m, n, k    int
	alpha      T
	a          []T
	lda        int
	b          []T
	ldb        int
	beta       T
	c          []T
	ldc        int
	tm, tn     int // tile sizes
	tilesAlong int // tiles along n
}

// newGemmTask returns the tiled product.
func newGemmTask[T float](tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) gemmTask[T] {
	t := gemmTask[T]{tA: tA, tB: tB, m: m, n: n, k: k, alpha: alpha, a: a, lda: lda, b: b, ldb: ldb, beta: beta, c: c, ldc: ldc}
	t.tm, t.tn = tileSizes(m, n)
	t.tm, t.tn = min(t.tm, max(m, 1)), min(t.tn, max(n, 1))
	t.tilesAlong = ceilDiv(n, t.tn)
	return t
}

// tiles returns the number of tiles (0 for an empty product).
func (t *gemmTask[T]) tiles() int {
	if t.m == 0 || t.n == 0 {
		return 0
	}
	return ceilDiv(t.m, t.tm) * t.tilesAlong
}

// Chunk computes tile i, row-major over the tiles (see gemmTile). A tile
// is computed the same way whoever runs it.
func (t *gemmTask[T]) Chunk(i int) {
	i0, j0 := (i/t.tilesAlong)*t.tm, (i%t.tilesAlong)*t.tn
	m, n := min(t.tm, t.m-i0), min(t.tn, t.n-j0)
	var a, b []T
	if t.tA {
		a = t.a[i0:] // columns i0… of A
	} else {
		a = t.a[i0*t.lda:] // rows i0… of op(A) = A
	}
	if t.tB {
		b = t.b[j0*t.ldb:] // rows j0… of B
	} else {
		b = t.b[j0:] // columns j0… of op(B) = B
	}
	gemmTile(t.tA, t.tB, m, n, t.k, t.alpha, a, t.lda, b, t.ldb, t.beta, t.c[i0*t.ldc+j0:], t.ldc)
}

// tasks holds an op's task records, made at its first run and reused, so
// that running a task allocates nothing.
type tasks struct {
	pool *parallel.Pool
	gemm any // *gemmTask[T]
	loop any // *loop[T]
}

// reuse returns the *P held in slot, replacing what it holds by a new P
// when it is not a *P (the first run, or a run with another dtype).
func reuse[P any](slot *any) *P {
	if p, ok := (*slot).(*P); ok {
		return p
	}
	p := new(P)
	*slot = p
	return p
}

// parallelGemm is gemm, its tiles run on the op's pool.
func parallelGemm[T float](ts *tasks, tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int) {
	t := reuse[gemmTask[T]](&ts.gemm)
	*t = newGemmTask(tA, tB, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
	ts.pool.Run(t, t.tiles())
}

// loop is an elementwise loop over the samples (or other units) 0…n−1
// of an op, one unit a chunk: its kernel does unit i, reading its operands
// from the slots s and the sizes from d.
type loop[T float] struct {
	kernel kernel
	d      filterDims
	f      [2]T // factors of a leaky rectifier, when the body needs them
	s      [5][]T
	len    int // of the slices split by forRanges
	inner  int // the inner size of a kernel's product, when it needs one
}

// kernel names the body of a loop. (A func value of a generic function
// taken inside generic code is a closure over its dictionary, allocated
// at every use; a switch allocates nothing.)
type kernel uint8

const (
	kFillRows kernel = iota
	kUnpermute
	kColTerm
	kColGradW
	kColGradX
	kE2ESum
	kEdgeSums
	kOperatorTimes
	kOperatorTransposeTimes
	kSignFactor
	kMulInto
	kE2NSums
	kEdgeDense
	kEdgeDenseGradX
	kRegenGradW
	kRegenRowTerm
)

// Chunk runs unit i.
func (l *loop[T]) Chunk(i int) {
	switch l.kernel {
	case kFillRows:
		fillRowsOf(l, i)
	case kUnpermute:
		unpermuteOf(l, i)
	case kColTerm:
		colTermOf(l, i)
	case kColGradW:
		colGradWOf(l, i)
	case kColGradX:
		colGradXOf(l, i)
	case kE2ESum:
		e2eSumOf(l, i)
	case kEdgeSums:
		edgeSumsOf(l, i)
	case kOperatorTimes:
		operatorTimesOf(l, i)
	case kOperatorTransposeTimes:
		operatorTransposeTimesOf(l, i)
	case kSignFactor:
		signFactorOf(l, i)
	case kMulInto:
		mulIntoOf(l, i)
	case kE2NSums:
		e2nSumsOf(l, i)
	case kEdgeDense:
		edgeDenseOf(l, i)
	case kEdgeDenseGradX:
		edgeDenseGradXOf(l, i)
	case kRegenGradW:
		regenGradWOf(l, i)
	case kRegenRowTerm:
		regenRowTermOf(l, i)
	default:
		panic("ops: unknown loop kernel")
	}
}

// forEach runs kernel k for units 0…n−1 on the op's pool, with operands s.
func forEach[T float](ts *tasks, n int, d filterDims, f [2]T, k kernel, s ...[]T) {
	l := forEachSetup(ts, d, f, k, s...)
	ts.pool.Run(l, n)
	l.clear()
}

// forEachSetup returns the op's loop record set for kernel k with
// operands s, for a caller that sets more fields before running it.
func forEachSetup[T float](ts *tasks, d filterDims, f [2]T, k kernel, s ...[]T) *loop[T] {
	l := reuse[loop[T]](&ts.loop)
	l.kernel, l.d, l.f = k, d, f
	copy(l.s[:], s)
	return l
}

// clear drops the loop's operands, so that it holds no buffer after a run.
func (l *loop[T]) clear() { l.s = [5][]T{} }

// rangeSize is the number of elements in a chunk of forRanges.
const rangeSize = 1 << 14

// forRanges runs body over the chunks [i·rangeSize, (i+1)·rangeSize) of
// slices of length n, on the op's pool; its kernel reads the bounds from
// l.span(i).
func forRanges[T float](ts *tasks, n int, f [2]T, k kernel, s ...[]T) {
	l := reuse[loop[T]](&ts.loop)
	l.len = n
	forEach(ts, ceilDiv(n, rangeSize), filterDims{}, f, k, s...)
}

// span returns the bounds of chunk i of forRanges.
func (l *loop[T]) span(i int) (lo, hi int) {
	lo = i * rangeSize
	return lo, min(lo+rangeSize, l.len)
}
