package train_test

import (
	"fmt"

	"github.com/skein-neuro/skein/train"
)

// A 5-fold run of two models on a 2-core machine trains two units at once
// with single-threaded BLAS; a single unit runs alone, still with
// single-threaded BLAS, so that its results equal those of any other
// parallelism.
func ExampleChooseParallelism() {
	fmt.Printf("%+v\n", train.ChooseParallelism(2, 2*5))
	fmt.Printf("%+v\n", train.ChooseParallelism(2, 1))
	// Output:
	// {Jobs:2 BLASThreads:1}
	// {Jobs:1 BLASThreads:1}
}
