package gemm

import (
	"runtime"
	"sync"
	"unsafe"
)

// float is the element type of a product.
type float interface{ float32 | float64 }

// kernel is a micro-kernel and the blocking that suits it.
type kernel[T float] struct {
	name string
	// mr × nr is the tile the micro-kernel computes; mc, kc and nc are the
	// blocks of rows of C, of the sum over k and of columns of C (mc a
	// multiple of mr, nc of nr).
	mr, nr, mc, kc, nc int
	// micro sets (add false) or adds to (add true) the mr × nr tile of C
	// at c (row stride ldc) the product of a packed panel of A (a, k steps
	// of mr values) and one of B (b, k steps of nr values), k ≥ 1.
	micro func(k int, a, b, c []T, ldc int, add bool)
}

// buffers are one goroutine's packed blocks: a holds up to mc × kc values
// of op(A), b up to kc × nc of op(B), tile one mr × nr tile at the edges
// of C.
type buffers[T float] struct {
	a, b, tile []T
}

// Pools of buffers, so that a product allocates nothing in steady state.
// They are caches, not state: a buffer's contents never outlive a call.
var (
	pool32 sync.Pool // *buffers[float32]
	pool64 sync.Pool // *buffers[float64]
)

// getBuffers returns buffers for an m × n × k product with kn, from the
// pool when it has large enough ones: blocks no larger than the product
// needs, so that small products do not allocate (or clear) large blocks.
func getBuffers[T float](kn *kernel[T], m, n, k int) *buffers[T] {
	la := kn.mr * ceilDiv(min(m, kn.mc), kn.mr) * min(k, kn.kc)
	lb := kn.nr * ceilDiv(min(n, kn.nc), kn.nr) * min(k, kn.kc)
	buf, ok := pool(kn).Get().(*buffers[T])
	if !ok || len(buf.tile) != kn.mr*kn.nr {
		buf = &buffers[T]{tile: make([]T, kn.mr*kn.nr)}
	}
	if cap(buf.a) < la {
		buf.a = make([]T, la)
	}
	if cap(buf.b) < lb {
		buf.b = make([]T, lb)
	}
	buf.a, buf.b = buf.a[:cap(buf.a)], buf.b[:cap(buf.b)]
	return buf
}

// putBuffers returns buf to its pool.
func putBuffers[T float](kn *kernel[T], buf *buffers[T]) { pool(kn).Put(buf) }

// pool returns the pool of buffers of T.
func pool[T float](*kernel[T]) *sync.Pool {
	var z T
	if _, ok := any(z).(float32); ok {
		return &pool32
	}
	return &pool64
}

// gemm computes C = alpha·op(A)·op(B) + beta·C with kn, for arguments
// already checked, over goroutines when split is true and the product is
// large enough.
func gemm[T float](kn *kernel[T], tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, beta T, c []T, ldc int, split bool) {
	if m == 0 || n == 0 || ((alpha == 0 || k == 0) && beta == 1) {
		return
	}
	if alpha == 0 || k == 0 {
		scale(m, n, beta, c, ldc)
		return
	}
	// beta = 0 is done by the first slice of k setting C, not adding to
	// it, so that C is never read (reference BLAS semantics).
	overwrite := beta == 0
	if !overwrite && beta != 1 {
		scale(m, n, beta, c, ldc)
	}
	w := 1
	if split && m*n*k >= SerialBelow {
		// At least one block of rows (or columns) per goroutine.
		w = min(runtime.GOMAXPROCS(0), max(ceilDiv(m, kn.mc), ceilDiv(n, 2*kn.nr)))
	}
	if w <= 1 {
		buf := getBuffers(kn, m, n, k)
		kn.serial(buf, tA, tB, m, n, k, alpha, a, lda, b, ldb, overwrite, c, ldc)
		putBuffers(kn, buf)
		return
	}
	// Strips of the longer side of C, whole tiles wide.
	byRows := m >= n
	long, unit := n, kn.nr
	if byRows {
		long, unit = m, kn.mr
	}
	strip := unit * ceilDiv(ceilDiv(long, w), unit)
	var wg sync.WaitGroup
	for lo := 0; lo < long; lo += strip {
		size := min(strip, long-lo)
		as, bs, cs := a, b, c
		ms, ns := m, n
		if byRows {
			ms = size
			cs = c[lo*ldc:]
			if tA {
				as = a[lo:]
			} else {
				as = a[lo*lda:]
			}
		} else {
			ns = size
			cs = c[lo:]
			if tB {
				bs = b[lo*ldb:]
			} else {
				bs = b[lo:]
			}
		}
		run := func() {
			buf := getBuffers(kn, ms, ns, k)
			kn.serial(buf, tA, tB, ms, ns, k, alpha, as, lda, bs, ldb, overwrite, cs, ldc)
			putBuffers(kn, buf)
		}
		if lo+strip >= long { // the last strip on the calling goroutine
			run()
			break
		}
		wg.Go(run)
	}
	wg.Wait()
}

// serial computes C = alpha·op(A)·op(B) + C (overwrite false) or
// alpha·op(A)·op(B) (overwrite true) on the calling goroutine, k ≥ 1.
func (kn *kernel[T]) serial(buf *buffers[T], tA, tB bool, m, n, k int, alpha T, a []T, lda int, b []T, ldb int, overwrite bool, c []T, ldc int) {
	for jc := 0; jc < n; jc += kn.nc {
		nb := min(kn.nc, n-jc)
		for pc := 0; pc < k; pc += kn.kc {
			kb := min(kn.kc, k-pc)
			packB(tB, b, ldb, pc, jc, kb, nb, kn.nr, buf.b)
			add := !overwrite || pc > 0
			for ic := 0; ic < m; ic += kn.mc {
				mb := min(kn.mc, m-ic)
				packA(tA, a, lda, ic, pc, mb, kb, kn.mr, alpha, buf.a)
				kn.macro(buf, mb, nb, kb, c[ic*ldc+jc:], ldc, add)
			}
		}
	}
}

// macro runs the micro-kernel over an mb × nb block of C from the packed
// blocks in buf (kb steps of k).
func (kn *kernel[T]) macro(buf *buffers[T], mb, nb, kb int, c []T, ldc int, add bool) {
	mr, nr := kn.mr, kn.nr
	for jr := 0; jr < nb; jr += nr {
		bp := buf.b[jr*kb:]
		nt := min(nr, nb-jr)
		for ir := 0; ir < mb; ir += mr {
			ap := buf.a[ir*kb:]
			mt := min(mr, mb-ir)
			ct := c[ir*ldc+jr:]
			if mt == mr && nt == nr {
				kn.micro(kb, ap, bp, ct, ldc, add)
				continue
			}
			// An edge tile: computed whole into buf.tile, then the part
			// inside C is set or added.
			kn.micro(kb, ap, bp, buf.tile, nr, false)
			for i := range mt {
				row, tile := ct[i*ldc:i*ldc+nt], buf.tile[i*nr:i*nr+nt]
				if add {
					for j, v := range tile {
						row[j] += v
					}
				} else {
					copy(row, tile)
				}
			}
		}
	}
}

// packA copies alpha·op(A)[ic:ic+mb, pc:pc+kb] into dst as panels of mr
// rows, each kb steps of mr values (op(A)[i, p] at p·mr + i within its
// panel), padding the last panel with zeros.
func packA[T float](tA bool, a []T, lda, ic, pc, mb, kb, mr int, alpha T, dst []T) {
	for ir := 0; ir < mb; ir += mr {
		panel := dst[ir*kb : ir*kb+mr*kb]
		rows := min(mr, mb-ir)
		switch {
		case tA:
			// op(A)[i, p] = A[p, i]: a step of k is contiguous in A.
			for p := range kb {
				src := a[(pc+p)*lda+ic+ir:][:rows]
				d := panel[p*mr : p*mr+mr]
				for i, v := range src {
					d[i] = alpha * v
				}
				clear(d[rows:])
			}
		case rows == 6 && mr == 6:
			gather6(panel, a[(ic+ir)*lda+pc:], lda, kb, alpha)
		default:
			for i := range rows {
				src := a[(ic+ir+i)*lda+pc:][:kb]
				for p, v := range src {
					panel[p*mr+i] = alpha * v
				}
			}
			for i := rows; i < mr; i++ {
				for p := range kb {
					panel[p*mr+i] = 0
				}
			}
		}
	}
}

// gather6 sets dst[6p + i] = alpha·a[i·lda + p] for i < 6, p < kb: six
// rows of A interleaved, a step of k at a time.
func gather6[T float](dst, a []T, lda, kb int, alpha T) {
	r0, r1, r2 := a[:kb], a[lda:][:kb], a[2*lda:][:kb]
	r3, r4, r5 := a[3*lda:][:kb], a[4*lda:][:kb], a[5*lda:][:kb]
	dst = dst[:6*kb]
	if alpha == 1 {
		for p := range kb {
			d := (*[6]T)(dst[6*p:])
			d[0], d[1], d[2], d[3], d[4], d[5] = r0[p], r1[p], r2[p], r3[p], r4[p], r5[p]
		}
		return
	}
	for p := range kb {
		d := (*[6]T)(dst[6*p:])
		d[0], d[1], d[2] = alpha*r0[p], alpha*r1[p], alpha*r2[p]
		d[3], d[4], d[5] = alpha*r3[p], alpha*r4[p], alpha*r5[p]
	}
}

// packB copies op(B)[pc:pc+kb, jc:jc+nb] into dst as panels of nr
// columns, each kb steps of nr values (op(B)[p, j] at p·nr + j within its
// panel), padding the last panel with zeros.
func packB[T float](tB bool, b []T, ldb, pc, jc, kb, nb, nr int, dst []T) {
	var z T
	stepBytes := nr * int(unsafe.Sizeof(z)) // of a panel
	tw := transposeWidth[T]()
	for jr := 0; jr < nb; jr += nr {
		panel := dst[jr*kb : jr*kb+nr*kb]
		cols := min(nr, nb-jr)
		switch {
		case !tB && cols == nr && stepBytes == 64:
			// op(B)[p, j] = B[p, j]: a step of k is contiguous in B,
			// copied 64 bytes at a time.
			copySteps(panel, b[pc*ldb+jc+jr:], ldb, kb)
		case !tB && cols == nr && stepBytes == 128:
			copyWideSteps(panel, b[pc*ldb+jc+jr:], ldb, kb)
		case !tB:
			for p := range kb {
				d := panel[p*nr : p*nr+nr]
				copy(d, b[(pc+p)*ldb+jc+jr:][:cols])
				clear(d[cols:])
			}
		case cols == nr && nr%tw == 0 && kb >= tw && transposeSteps(panel, b[(jc+jr)*ldb+pc:], ldb, nr, kb/tw):
			// op(B)[p, j] = B[j, p]: tw × tw blocks transposed on
			// vectors, then the last kb mod tw steps.
			for j0 := tw; j0 < nr; j0 += tw {
				transposeSteps(panel[j0:], b[(jc+jr+j0)*ldb+pc:], ldb, nr, kb/tw)
			}
			for p := kb - kb%tw; p < kb; p++ {
				for j := range nr {
					panel[p*nr+j] = b[(jc+jr+j)*ldb+pc+p]
				}
			}
		default:
			for j := range cols {
				src := b[(jc+jr+j)*ldb+pc:][:kb]
				for p, v := range src {
					panel[p*nr+j] = v
				}
			}
			for j := cols; j < nr; j++ {
				for p := range kb {
					panel[p*nr+j] = 0
				}
			}
		}
	}
}

// transposeWidth is the side of the blocks transposeSteps transposes: 32
// bytes of T.
func transposeWidth[T float]() int {
	var z T
	return 32 / int(unsafe.Sizeof(z))
}

// scale sets C = beta·C, and C = 0 when beta is 0 (whatever C held).
func scale[T float](m, n int, beta T, c []T, ldc int) {
	for i := range m {
		row := c[i*ldc : i*ldc+n]
		if beta == 0 {
			clear(row)
			continue
		}
		for j := range row {
			row[j] *= beta
		}
	}
}

// ceilDiv returns ⌈a/b⌉ for a ≥ 0, b > 0.
func ceilDiv(a, b int) int { return (a + b - 1) / b }
