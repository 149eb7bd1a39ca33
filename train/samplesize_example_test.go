package train_test

import (
	"fmt"

	"github.com/skein-neuro/skein/train"
)

func ExampleSubsetSplits() {
	splits, _ := train.Folds{K: 2, Repeats: 1, Seed: 1}.Splits(8)
	subsets := train.SubsetSplits(splits, nil, []float64{0.5, 1}, 7)
	for fi, f := range []float64{0.5, 1} {
		s := subsets[fi][0]
		fmt.Printf("fraction %.1f: train on %d of %d, test on %d\n", f, len(s.Train), len(splits[0].Train), len(s.Test))
	}
	// Output:
	// fraction 0.5: train on 2 of 4, test on 4
	// fraction 1.0: train on 4 of 4, test on 4
}
