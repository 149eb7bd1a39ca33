//go:build !openblas

package blas

import (
	"gonum.org/v1/gonum/blas/blas32"
	"gonum.org/v1/gonum/blas/blas64"
	"gorgonia.org/gorgonia"

	"github.com/skein-neuro/skein/internal/gemm"
)

const name = "gonum"

// The pure-Go build: gonum's BLAS with the matrix products of package
// internal/gemm (vector kernels in assembly on amd64, plain Go elsewhere).
func init() {
	blas64.Use(gemm.Implementation{})
	blas32.Use(gemm.Implementation{})
	gorgonia.Use(gemm.Implementation{})
}
