//go:build !openblas

package blas

// Threads returns the number of threads one matrix product may use. The
// pure-Go Gemm (package internal/gemm) splits a large product into strips
// computed by up to runtime.GOMAXPROCS(0) goroutines; they share the Go scheduler with every
// other goroutine, so products in concurrent goroutines do not
// oversubscribe the cores. Threads reports 1 here, meaning that the BLAS
// keeps no threads of its own.
func Threads() int { return 1 }

// SetThreads does nothing with the pure-Go BLAS (see Threads) and returns 1.
// It exists so that callers need no build tag.
func SetThreads(n int) (previous int) { return 1 }
