package gemm_test

import (
	"fmt"
	"testing"

	gonumblas "gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas32"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/blas/gonum"

	"github.com/skein-neuro/skein/internal/blas"
	"github.com/skein-neuro/skein/internal/gemm"
)

// BenchmarkSgemm and BenchmarkDgemm time C = A·B on square matrices
// through this package ("skein"), gonum's pure-Go BLAS ("gonum") and, in
// a build with -tags openblas, OpenBLAS ("openblas", with the threads it
// chose), and report GFLOP/s (2·n³ flops a product):
//
//	go test -run - -bench . ./internal/gemm
//	CGO_LDFLAGS=-lopenblas go test -tags openblas -run - -bench . ./internal/gemm
func BenchmarkSgemm(b *testing.B) {
	for _, n := range []int{256, 512, 1024} {
		x, y, z := benchInputs[float32](n)
		for _, impl := range implementations(blas32.Implementation(), blas64.Implementation()) {
			b.Run(fmt.Sprintf("%s/%d", impl.name, n), func(b *testing.B) {
				benchRate(b, n, func() {
					impl.f32.Sgemm(gonumblas.NoTrans, gonumblas.NoTrans, n, n, n, 1, x, n, y, n, 0, z, n)
				})
			})
		}
	}
}

func BenchmarkDgemm(b *testing.B) {
	for _, n := range []int{256, 512, 1024} {
		x, y, z := benchInputs[float64](n)
		for _, impl := range implementations(blas32.Implementation(), blas64.Implementation()) {
			b.Run(fmt.Sprintf("%s/%d", impl.name, n), func(b *testing.B) {
				benchRate(b, n, func() {
					impl.f64.Dgemm(gonumblas.NoTrans, gonumblas.NoTrans, n, n, n, 1, x, n, y, n, 0, z, n)
				})
			})
		}
	}
}

type implementation struct {
	name string
	f32  gonumblas.Float32
	f64  gonumblas.Float64
}

// implementations returns this package's, gonum's and, when package
// internal/blas installed OpenBLAS, the installed one.
func implementations(f32 gonumblas.Float32, f64 gonumblas.Float64) []implementation {
	impls := []implementation{
		{"skein", gemm.Implementation{}, gemm.Implementation{}},
		{"gonum", gonum.Implementation{}, gonum.Implementation{}},
	}
	if blas.Name() == "openblas" {
		impls = append(impls, implementation{"openblas", f32, f64})
	}
	return impls
}

func benchInputs[T float32 | float64](n int) (x, y, z []T) {
	x, y, z = make([]T, n*n), make([]T, n*n), make([]T, n*n)
	for i := range x {
		x[i], y[i] = T(i%7)-3, T(i%5)-2
	}
	return x, y, z
}

func benchRate(b *testing.B, n int, f func()) {
	for b.Loop() {
		f()
	}
	b.ReportMetric(2*float64(n)*float64(n)*float64(n)*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
}
