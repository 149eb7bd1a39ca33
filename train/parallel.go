package train

import (
	"os"

	"github.com/skein-neuro/skein/internal/blas"
)

// Parallelism is how a run spreads over the cores: Jobs units (model ×
// repeat × fold) train at once, and each matrix product may use
// BLASThreads threads of the BLAS.
type Parallelism struct {
	Jobs        int
	BLASThreads int
}

// ChooseParallelism returns the parallelism of a run of units independent
// units on cores cores: one kind of parallelism at a time, never both.
//
// The rule is units first, and always single-threaded BLAS: Jobs =
// min(cores, units) units at once, BLASThreads = 1.
//
// Units first is read off bench/parallel.sh (README, "Speed"): for the
// reference network at p = 68 to 268 with batches of 16, a 5-fold run on 2
// cores was fastest with folds in parallel and single-threaded OpenBLAS;
// two OpenBLAS threads per product gained far less, because a third to a
// half of a training step is elementwise Go work that one thread does, and
// folds in parallel on top of two-thread OpenBLAS were slower than either
// alone (OpenBLAS threads spin while they wait). The pure-Go BLAS spreads
// a product over goroutines that share the Go scheduler with the units, so
// it cannot oversubscribe the cores.
//
// The BLAS stays single-threaded even when there are fewer units than
// cores, because results must not depend on the parallelism: OpenBLAS
// splits some reductions across its threads, and two threads instead of
// one change the last bits of a ridge solution (measured here: the demo's
// predictions.csv differs between OPENBLAS_NUM_THREADS=1 and 2). A user
// who sets OPENBLAS_NUM_THREADS gets that many threads (ApplyBLASThreads),
// and results then repeat exactly only at the same setting.
func ChooseParallelism(cores, units int) Parallelism {
	return Parallelism{Jobs: max(min(cores, units), 1), BLASThreads: 1}
}

// ApplyBLASThreads sets the number of threads of the BLAS in use for the
// whole process (see package internal/blas; it does nothing with the
// pure-Go BLAS) and returns the number in effect. When the environment
// sets OPENBLAS_NUM_THREADS, the user's choice is kept and returned.
func ApplyBLASThreads(threads int) int {
	if os.Getenv("OPENBLAS_NUM_THREADS") != "" {
		return blas.Threads()
	}
	blas.SetThreads(threads)
	return blas.Threads()
}
