//go:build openblas

package blas

/*
#cgo LDFLAGS: -lopenblas
void openblas_set_num_threads(int num_threads);
int openblas_get_num_threads(void);
*/
import "C"

// Threads returns the number of threads OpenBLAS uses for one call.
func Threads() int { return int(C.openblas_get_num_threads()) }

// SetThreads sets the number of threads OpenBLAS uses for one call (n ≥ 1;
// n < 1 is taken as 1) and returns the previous number. It applies to the
// whole process, to calls from every goroutine.
func SetThreads(n int) (previous int) {
	previous = Threads()
	C.openblas_set_num_threads(C.int(max(n, 1)))
	return previous
}
