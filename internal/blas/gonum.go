//go:build !openblas

package blas

const name = "gonum"
