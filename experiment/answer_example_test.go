package experiment_test

import (
	"fmt"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// Answer reads the comparisons of a run (here made up) and says whether
// fusing structure with function beat the reference baseline.
func ExampleAnswer() {
	exp := &experiment.Experiment{Models: []train.ModelConfig{
		{Name: "ridge-fc", Config: linear.Config{Ridge: &linear.RidgeConfig{Input: linear.InputFunctional}}},
		{Name: "ridge-both", Config: linear.Config{Ridge: &linear.RidgeConfig{Input: linear.InputBoth}}},
	}}
	comps := []eval.Comparison{
		{Model: "ridge-fc", Target: "recall", Baseline: true, IsReference: true, R: eval.Interval{Estimate: 0.31}},
		{Model: "ridge-both", Target: "recall", Baseline: true, Reference: "ridge-fc", R: eval.Interval{Estimate: 0.38},
			DiffR: eval.TTest{J: 10, MeanDiff: 0.07, P: 0.012}},
	}
	fmt.Println(experiment.Fusion(exp))
	fmt.Println(experiment.Answer(exp, comps))
	// Output:
	// [ridge-both]
	// Fusing structure with function beat the reference baseline: ridge-both on recall, r within folds 0.380 against 0.310 for ridge-fc, Δr +0.070, p = 0.012 (Δr is the mean difference in fold r from the reference, tested by the corrected resampled t-test at p < 0.05).
}
