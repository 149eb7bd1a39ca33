//go:build !amd64 || purego

package gemm

// The kernels in use, best first: plain Go only.
var (
	kernels32 = []kernel[float32]{goKernel[float32]()}
	kernels64 = []kernel[float64]{goKernel[float64]()}
)
