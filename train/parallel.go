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
// The rule is units first: Jobs = min(cores, units) units at once, and
// the cores left over, cores/Jobs of them per unit (at least 1), go to
// the BLAS. With at least as many units as cores (any cross-validated run:
// 5 folds on 2 cores) that is one unit per core and single-threaded BLAS.
//
// It is read off bench/parallel.sh (README, "Speed"): for the reference
// network at p = 68 to 268 with batches of 16, a 5-fold run on 2 cores
// was fastest with folds in parallel and single-threaded OpenBLAS; two
// OpenBLAS threads per product gained far less, because a third to a half
// of a training step is elementwise Go work that one thread does, and
// folds in parallel on top of two-thread OpenBLAS were slower than either
// alone (OpenBLAS threads spin while they wait). The pure-Go BLAS spreads
// a product over goroutines that share the Go scheduler with the units, so
// it cannot oversubscribe the cores, and units in parallel keep every
// core busy through the elementwise work as well. The same holds for the
// baselines, whose products are large enough to run well on one thread
// each.
func ChooseParallelism(cores, units int) Parallelism {
	cores = max(cores, 1)
	jobs := max(min(cores, units), 1)
	return Parallelism{Jobs: jobs, BLASThreads: BLASThreadsFor(cores, jobs)}
}

// BLASThreadsFor returns the BLAS threads per product when jobs units run
// at once on cores cores: cores/jobs, at least 1, so that the units and
// the BLAS together never ask for more threads than there are cores.
func BLASThreadsFor(cores, jobs int) int {
	return max(cores/max(jobs, 1), 1)
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
