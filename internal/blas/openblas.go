//go:build openblas

package blas

import (
	"gonum.org/v1/gonum/blas/blas32"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/netlib/blas/netlib"
	"gorgonia.org/gorgonia"
)

const name = "openblas"

func init() {
	blas64.Use(netlib.Implementation{})
	blas32.Use(netlib.Implementation{})
	gorgonia.Use(netlib.Implementation{})
}
