package experiment

import (
	"math"
	"testing"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/model/graphnet"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// answerExperiment has a functional ridge (the reference), a ridge on both
// connectomes and a network whose second branch propagates over the
// structural graph: two models that fuse structure with function.
func answerExperiment(fusion bool) *Experiment {
	ridge := func(name string, in linear.Input) train.ModelConfig {
		return train.ModelConfig{Name: name, Config: linear.Config{Ridge: &linear.RidgeConfig{Input: in}}}
	}
	exp := &Experiment{Models: []train.ModelConfig{
		{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}},
		ridge("ridge-fc", linear.InputFunctional),
	}}
	if fusion {
		exp.Models = append(exp.Models, ridge("ridge-both", linear.InputBoth), train.ModelConfig{Name: "net", Network: &graphnet.Config{
			Branches: []graphnet.BranchConfig{{Input: graphnet.InputFunctional}, {Input: graphnet.InputPropagated}}}})
	}
	return exp
}

// comp is one comparison of model with the reference ridge-fc on target.
func comp(model, target string, r, diff, p float64) eval.Comparison {
	c := eval.Comparison{Model: model, Target: target, Reference: "ridge-fc", R: eval.Interval{Estimate: r}}
	c.DiffR = eval.TTest{J: 10, MeanDiff: diff, P: p}
	if model == "ridge-fc" {
		c.Reference, c.IsReference, c.Baseline = "", true, true
		c.DiffR = eval.TTest{MeanDiff: math.NaN(), P: math.NaN()}
	}
	return c
}

// answerCase is one case of TestAnswer: an experiment with or without
// models that fuse structure with function, its comparisons and the
// sentence they give.
type answerCase struct {
	name   string
	fusion bool
	comps  []eval.Comparison
	want   string
}

// TestAnswer checks the sentence for each outcome against golden text.
// The verdicts follow the rule of Answer (p < 0.05 and the sign of Δr:
// common practice, no source).
func TestAnswer(t *testing.T) {
	ref := comp("ridge-fc", "recall", 0.3, 0, 0)
	tests := []answerCase{
		{"no fusion model", false, []eval.Comparison{ref},
			"No model of this experiment learns from both the functional and the structural connectome, so this run cannot say whether fusing structure with function beats the reference baseline."},
		{"no reference", true, []eval.Comparison{{Model: "net", Target: "recall"}},
			"This experiment has no reference baseline to compare ridge-both and net with, so this run cannot say whether fusing structure with function beats one."},
		{"one, beat", true, []eval.Comparison{ref, comp("net", "recall", 0.41, 0.11, 0.034)},
			"Fusing structure with function beat the reference baseline: net on recall, r within folds 0.410 against 0.300 for ridge-fc, Δr +0.110, p = 0.034 (Δr is the mean difference in fold r from the reference, tested by the corrected resampled t-test at p < 0.05)."},
		{"one, not significant", true, []eval.Comparison{ref, comp("net", "recall", 0.33, 0.03, 0.4)},
			"Fusing structure with function did not beat the reference baseline (the difference is not significant): net on recall, r within folds 0.330 against 0.300 for ridge-fc, Δr +0.030, p = 0.400 (Δr is the mean difference in fold r from the reference, tested by the corrected resampled t-test at p < 0.05)."},
		{"one, worse", true, []eval.Comparison{ref, comp("net", "recall", 0.1, -0.2, 0.0004)},
			"Fusing structure with function did not beat the reference baseline; it did worse: net on recall, r within folds 0.100 against 0.300 for ridge-fc, Δr -0.200, p < 0.001 (Δr is the mean difference in fold r from the reference, tested by the corrected resampled t-test at p < 0.05)."},
		{"several", true, []eval.Comparison{ref, comp("ridge-both", "recall", 0.32, 0.02, 0.5), comp("net", "recall", 0.45, 0.15, 0.01),
			comp("net", "fluency", 0.2, -0.01, 0.9)},
			"Fusing structure with function beat the reference baseline in 1 of 3 comparisons (net on recall, r within folds 0.450 against 0.300 for ridge-fc, Δr +0.150, p = 0.010): it differed not significantly in the other two (ridge-both on recall and net on fluency, Δr from -0.010 to +0.020); each comparison is one model that learns from both connectomes on one score, Δr is the mean difference in fold r from the reference, tested by the corrected resampled t-test at p < 0.05, not corrected for the 3 comparisons."},
		{"several, none beat", true, []eval.Comparison{ref, comp("ridge-both", "recall", 0.32, 0.02, 0.5), comp("net", "recall", 0.1, -0.2, 0.02)},
			"Fusing structure with function did not beat the reference baseline in any of 2 comparisons: it did worse in 1 (net on recall, r within folds 0.100 against 0.300 for ridge-fc, Δr -0.200, p = 0.020) and differed not significantly in the other one (ridge-both on recall, Δr +0.020); each comparison is one model that learns from both connectomes on one score, Δr is the mean difference in fold r from the reference, tested by the corrected resampled t-test at p < 0.05, not corrected for the 2 comparisons."},
		{"undefined test", true, []eval.Comparison{ref, comp("ridge-both", "recall", math.NaN(), math.NaN(), math.NaN()), comp("net", "recall", 0.3, 0.0, 0.99)},
			"Fusing structure with function did not beat the reference baseline in any of 2 comparisons: it differed not significantly in all two (ridge-both on recall and net on recall, Δr +0.000); each comparison is one model that learns from both connectomes on one score, Δr is the mean difference in fold r from the reference, tested by the corrected resampled t-test at p < 0.05, not corrected for the 2 comparisons."},
	}
	fusedRef := comp("ridge-fc", "recall", 0.3, 0, 0)
	fusedRef.Model = "ridge-both"
	tests = append(tests, answerCase{"the reference fuses", true, []eval.Comparison{fusedRef},
		"The reference baseline ridge-both itself learns from both connectomes and no other model that does was compared with it, so this run cannot say whether fusing structure with function beats a baseline; name another baseline with comparison.reference."},
		answerCase{"the reference fuses, another model too", true, []eval.Comparison{fusedRef, {Model: "net", Target: "recall", Reference: "ridge-both",
			R: eval.Interval{Estimate: 0.4}, DiffR: eval.TTest{MeanDiff: 0.1, P: 0.2}}},
			"Fusing structure with function did not beat the reference baseline (the difference is not significant): net on recall, r within folds 0.400 against 0.300 for ridge-both, Δr +0.100, p = 0.200 (Δr is the mean difference in fold r from the reference, tested by the corrected resampled t-test at p < 0.05; ridge-both, the reference baseline on recall, itself learns from both connectomes)."})
	for _, tt := range tests {
		if got := Answer(answerExperiment(tt.fusion), tt.comps); got != tt.want {
			t.Errorf("%s:\ngot  %s\nwant %s", tt.name, got, tt.want)
		}
	}
}
