//go:build !purego

package gemm

import (
	"unsafe"

	"golang.org/x/sys/cpu"
)

// The kernels in use, best first: the assembly ones when the processor has
// AVX2 and FMA (and the operating system saves the vector registers, which
// cpu.X86.HasAVX2 includes), then plain Go.
var kernels32, kernels64 = kernels()

func kernels() ([]kernel[float32], []kernel[float64]) {
	k32, k64 := []kernel[float32]{goKernel[float32]()}, []kernel[float64]{goKernel[float64]()}
	if !cpu.X86.HasAVX2 || !cpu.X86.HasFMA {
		return k32, k64
	}
	avx32 := kernel[float32]{name: "avx2", mr: 6, nr: 16, mc: 144, kc: 256, nc: 2048, micro: microS6x16}
	avx64 := kernel[float64]{name: "avx2", mr: 6, nr: 8, mc: 96, kc: 256, nc: 1024, micro: microD6x8}
	k32, k64 = append([]kernel[float32]{avx32}, k32...), append([]kernel[float64]{avx64}, k64...)
	if cpu.X86.HasAVX512F {
		// The same 6-row tiles, twice as wide; every element is the same
		// chain of fused multiply-adds as in the AVX2 kernel, so the
		// results are the same to the bit.
		avx512 := kernel[float32]{name: "avx512", mr: 6, nr: 32, mc: 144, kc: 256, nc: 2048, micro: microS6x32}
		k32 = append([]kernel[float32]{avx512}, k32...)
	}
	return k32, k64
}

// microS6x16 is the float32 AVX2 kernel (see kernel.micro).
func microS6x16(k int, a, b, c []float32, ldc int, add bool) {
	_, _, _ = a[6*k-1], b[16*k-1], c[5*ldc+15] // the kernel stays inside
	sgemm6x16(k, &a[0], &b[0], &c[0], ldc, add)
}

// microS6x32 is the float32 AVX-512 kernel (see kernel.micro).
func microS6x32(k int, a, b, c []float32, ldc int, add bool) {
	_, _, _ = a[6*k-1], b[32*k-1], c[5*ldc+31]
	sgemm6x32(k, &a[0], &b[0], &c[0], ldc, add)
}

// microD6x8 is the float64 AVX2 kernel (see kernel.micro).
func microD6x8(k int, a, b, c []float64, ldc int, add bool) {
	_, _, _ = a[6*k-1], b[8*k-1], c[5*ldc+7]
	dgemm6x8(k, &a[0], &b[0], &c[0], ldc, add)
}

// sgemm6x16 sets (add false) or adds to (add true) the 6 × 16 float32 tile
// at c, row stride ldc elements, the product of the packed panels a (k
// steps of 6) and b (k steps of 16); k ≥ 1. It needs AVX2 and FMA.
//
//go:noescape
func sgemm6x16(k int, a, b, c *float32, ldc int, add bool)

// sgemm6x32 is sgemm6x16 with 6 × 32 tiles (b: k steps of 32) on
// 512-bit registers. It needs AVX-512F.
//
//go:noescape
func sgemm6x32(k int, a, b, c *float32, ldc int, add bool)

// dgemm6x8 is sgemm6x16 for float64 and 6 × 8 tiles.
//
//go:noescape
func dgemm6x8(k int, a, b, c *float64, ldc int, add bool)

// hasAVX2 reports whether transpose8 may run.
var hasAVX2 = cpu.X86.HasAVX2

// copySteps copies n steps of 64 bytes, ld elements apart in src, to
// consecutive 64-byte steps of dst; n ≥ 1.
func copySteps[T float](dst, src []T, ld, n int) {
	var z T
	size := int(unsafe.Sizeof(z))
	step := 64 / size
	_, _ = dst[n*step-1], src[(n-1)*ld+step-1]
	copyRows64(unsafe.Pointer(&dst[0]), unsafe.Pointer(&src[0]), ld*size, n)
}

// transposeSteps sets dst[p·ldd + i] = src[i·ld + p] for i < w, p < w·n,
// where w is 8 for float32 and 4 for float64, when the processor has AVX2,
// and reports whether it did; n ≥ 1.
func transposeSteps[T float](dst, src []T, ld, ldd, n int) bool {
	if !hasAVX2 {
		return false
	}
	w := transposeWidth[T]()
	_, _ = dst[(w*n-1)*ldd+w-1], src[(w-1)*ld+w*n-1]
	if w == 8 {
		transpose8((*float32)(unsafe.Pointer(&dst[0])), (*float32)(unsafe.Pointer(&src[0])), ld, ldd, n)
	} else {
		transpose4((*float64)(unsafe.Pointer(&dst[0])), (*float64)(unsafe.Pointer(&src[0])), ld, ldd, n)
	}
	return true
}

// copyWideSteps copies n steps of 128 bytes, ld elements apart in src, to
// consecutive 128-byte steps of dst; n ≥ 1.
func copyWideSteps[T float](dst, src []T, ld, n int) {
	var z T
	size := int(unsafe.Sizeof(z))
	step := 128 / size
	_, _ = dst[n*step-1], src[(n-1)*ld+step-1]
	copyRows128(unsafe.Pointer(&dst[0]), unsafe.Pointer(&src[0]), ld*size, n)
}

//go:noescape
func copyRows64(dst, src unsafe.Pointer, stride, n int)

//go:noescape
func copyRows128(dst, src unsafe.Pointer, stride, n int)

//go:noescape
func transpose8(dst, src *float32, ld, ldd, n int)

//go:noescape
func transpose4(dst, src *float64, ld, ldd, n int)
