// Package gemm computes general matrix products, C = alpha·op(A)·op(B) +
// beta·C, in pure Go (no cgo) at a rate close to that of an optimised BLAS:
// its Implementation is gonum's pure-Go BLAS with Sgemm and Dgemm replaced,
// and package internal/blas installs it in the default build.
//
// The method is the one of Goto and van de Geijn ("Anatomy of
// high-performance matrix multiplication", ACM TOMS 34(3), 2008): the sum
// over k is cut into slices of kc, the columns of C into blocks of nc and
// its rows into blocks of mc; each kc × nc block of op(B) is copied
// ("packed") into panels of nr columns, each mc × kc block of op(A) into
// panels of mr rows (multiplied by alpha on the way), and a micro-kernel
// adds the product of one A panel and one B panel, an mr × nr tile, to C,
// its accumulators held in registers over the whole slice of k.
//
// On amd64 processors with AVX2 and FMA the micro-kernels are assembly:
// 6 × 16 tiles of float32 and 6 × 8 tiles of float64, in twelve 256-bit
// accumulators, one fused multiply-add per element and step of k. Elsewhere
// (other processors, other architectures, or the purego build tag) a 4 × 4
// kernel in plain Go does the same work. The choice is made once, at
// program start, from golang.org/x/sys/cpu.
//
// Large products are split over goroutines, in strips of C's longer side;
// each strip is computed exactly as the whole would be, so the result does
// not depend on the number of goroutines (GOMAXPROCS): every element of C
// is the same sequence of operations in every case. A product of fewer than
// SerialBelow multiply-adds runs on the calling goroutine and, in steady
// state, allocates nothing.
//
// Rounding differs from gonum's reference kernels (the sums are taken in
// another order, with fused multiply-adds), within the usual bound of a
// computed inner product, |error| ≤ k·u·Σ|a||b| for unit roundoff u.
package gemm
