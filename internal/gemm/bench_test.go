package gemm

import (
	"fmt"
	"testing"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/gonum"
)

// BenchmarkSgemm and BenchmarkDgemm time C = A·B on square matrices,
// through this package and through gonum's pure-Go BLAS, and report
// GFLOP/s (2·n³ flops a product):
//
//	go test -run - -bench . ./internal/gemm
func BenchmarkSgemm(b *testing.B) {
	for _, n := range []int{256, 512, 1024} {
		x, y, z := benchInputs[float32](n)
		for _, impl := range []struct {
			name string
			f    func()
		}{
			{"skein", func() { Implementation{}.Sgemm(blas.NoTrans, blas.NoTrans, n, n, n, 1, x, n, y, n, 0, z, n) }},
			{"gonum", func() { gonum.Implementation{}.Sgemm(blas.NoTrans, blas.NoTrans, n, n, n, 1, x, n, y, n, 0, z, n) }},
		} {
			b.Run(fmt.Sprintf("%s/%d", impl.name, n), func(b *testing.B) { benchRate(b, n, impl.f) })
		}
	}
}

func BenchmarkDgemm(b *testing.B) {
	for _, n := range []int{256, 512, 1024} {
		x, y, z := benchInputs[float64](n)
		for _, impl := range []struct {
			name string
			f    func()
		}{
			{"skein", func() { Implementation{}.Dgemm(blas.NoTrans, blas.NoTrans, n, n, n, 1, x, n, y, n, 0, z, n) }},
			{"gonum", func() { gonum.Implementation{}.Dgemm(blas.NoTrans, blas.NoTrans, n, n, n, 1, x, n, y, n, 0, z, n) }},
		} {
			b.Run(fmt.Sprintf("%s/%d", impl.name, n), func(b *testing.B) { benchRate(b, n, impl.f) })
		}
	}
}

func benchInputs[T float](n int) (x, y, z []T) {
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
