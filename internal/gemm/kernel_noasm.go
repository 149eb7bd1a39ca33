//go:build !amd64 || purego

package gemm

import "unsafe"

// The kernels in use, best first: plain Go only.
var (
	kernels32 = []kernel[float32]{goKernel[float32]()}
	kernels64 = []kernel[float64]{goKernel[float64]()}
)

// copySteps copies n steps of 64 bytes, ld elements apart in src, to
// consecutive 64-byte steps of dst; n ≥ 1.
func copySteps[T float](dst, src []T, ld, n int) {
	var z T
	step := 64 / int(unsafe.Sizeof(z))
	for p := range n {
		copy(dst[p*step:p*step+step], src[p*ld:p*ld+step])
	}
}

// copyWideSteps copies n steps of 128 bytes, ld elements apart in src, to
// consecutive 128-byte steps of dst; n ≥ 1.
func copyWideSteps[T float](dst, src []T, ld, n int) {
	var z T
	step := 128 / int(unsafe.Sizeof(z))
	for p := range n {
		copy(dst[p*step:p*step+step], src[p*ld:p*ld+step])
	}
}

// transposeSteps (see the amd64 version) does nothing and reports false: there is no vector
// transpose in this build.
func transposeSteps[T float](dst, src []T, ld, ldd, n int) bool { return false }
