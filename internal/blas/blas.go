// Package blas selects the BLAS that skein's matrix products use, in one
// place: by default gonum's pure-Go implementation with the faster Sgemm
// and Dgemm of package internal/gemm (still pure Go, no cgo), or OpenBLAS
// (through cgo and gonum.org/v1/netlib) when built with the openblas build
// tag:
//
//	CGO_LDFLAGS=-lopenblas go build -tags openblas ./...
//
// The choice is made at program start, by importing this package (a blank
// import is enough): it sets gonum's blas64 and blas32 implementations and
// gorgonia's (and so gorgonia.org/tensor's). Packages whose products should
// follow the choice import it.
package blas

// Name tells which BLAS is in use: "gonum" (pure Go: gonum's, with the
// products of internal/gemm) or "openblas".
func Name() string { return name }
