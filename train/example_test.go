package train_test

import (
	"context"
	"fmt"
	"log"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// A whole cross-validated comparison from Go: a synthetic cohort,
// preprocessed as an experiment file would ask, two models under the same
// 5-fold splits.
func ExampleRunner() {
	sc, err := synth.Generate(synth.Config{N: 60, P: 10, Seed: 1, Targets: 1})
	if err != nil {
		log.Fatal(err)
	}
	if err := sc.Preprocess(data.Preprocess{}); err != nil { // the defaults: Fisher z, log1p, scaled by the maximum
		log.Fatal(err)
	}
	exp := &train.Design{
		Seed: 7,
		CV:   train.CV{Folds: new(5)},
		Models: []train.ModelConfig{
			{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}},
			{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}},
		},
	}
	exp.SetDefaults()
	runner := &train.Runner{Design: exp, Cohort: sc.Cohort}
	res, err := runner.Run(context.Background())
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println(len(res.Splits), "folds,", len(res.Units), "units,", len(res.Predictions), "test predictions")
	// Output: 5 folds, 10 units, 120 test predictions
}
