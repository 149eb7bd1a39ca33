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
// units on cores cores.
//
// The rule is units first, and always single-threaded BLAS: Jobs =
// min(cores, units) units at once, BLASThreads = 1. Within a unit a
// network spreads its products and element loops over helper goroutines
// that take work only when they are idle (package graphnet), so a unit
// that runs alone, such as the last fold of a round, still gets the cores
// the others left; baselines run on their unit's goroutine.
//
// This is read off bench/parallel.sh (README, "Speed"): for the reference
// network with batches of 16, a 5-fold run on 2 cores ran 1.7–1.8 times
// as fast as on one core with OpenBLAS, whether its folds ran two at a
// time or one after another, and two OpenBLAS threads on top were slower
// (OpenBLAS threads spin while they wait, competing with the goroutines).
//
// The BLAS stays single-threaded because results must not depend on the
// parallelism: OpenBLAS splits some reductions across its threads, and two
// threads instead of one change the last bits of a ridge solution
// (measured here: the demo's predictions.csv differs between
// OPENBLAS_NUM_THREADS=1 and 2). A user who sets OPENBLAS_NUM_THREADS gets
// that many threads (ApplyBLASThreads), and results then repeat exactly
// only at the same setting.
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
