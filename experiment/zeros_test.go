package experiment

import (
	"strings"
	"testing"
)

// TestExplicitZeros: a 0 written in the file is never replaced by the
// key's default. Where 0 means nothing (no folds, no epochs, a learning
// rate of 0) it is an error naming the key; where it means something (no
// early stopping, no inner validation, Adam without a running mean) it is
// kept.
func TestExplicitZeros(t *testing.T) {
	const (
		cohort = "[cohort]\nparticipants = \"p.tsv\"\ntargets = [\"score\"]\n"
		fc     = "[cohort.functional]\nfiles = \"fc/{participant_id}.tsv\"\n"
		ridge  = "[[model]]\nname = \"m\"\n[model.ridge]\n"
		kernel = "[[model]]\nname = \"m\"\n[model.kernel_ridge]\n"
		cpm    = "[[model]]\nname = \"m\"\n[model.cpm]\n"
		logit  = "[[model]]\nname = \"m\"\n[model.logistic]\n"
		klogit = "[[model]]\nname = \"m\"\n[model.kernel_logistic]\n"
	)
	net := func(table, line string) string {
		return "[[model]]\nname = \"m\"\n[model.network" + table + "]\n" + line +
			"[[model.network.branch]]\nlayers = [{kind = \"e2n\", channels = 2}, {kind = \"n2g\", size = 2}]\n"
	}
	tests := []struct {
		name string
		text string
		want string  // part of the error; "" when the 0 is kept
		kept float64 // the value read, when kept
		get  func(*Experiment) float64
	}{
		// Errors.
		{"cohort.min_participants", cohort + "min_participants = 0\n" + fc, "cohort.min_participants: must be at least 1, found 0", 0, nil},
		{"cohort.outlier_sd", cohort + "outlier_sd = 0.0\n" + fc, "cohort.outlier_sd: must be positive, found 0", 0, nil},
		{"preprocess.functional.clip", "[preprocess.functional]\nclip = 0.0\n", "preprocess.functional.clip: want a number in (0, 0.5), got 0", 0, nil},
		{"preprocess.structural.density", "[preprocess.structural]\ndensity = 0.0\n", "preprocess.structural.density: want a fraction in (0, 1], got 0", 0, nil},
		{"cv.folds", "[cv]\nfolds = 0\n", "cv.folds: need at least 2, found 0", 0, nil},
		{"cv.repeats", "[cv]\nrepeats = 0\n", "cv.repeats: need at least 1, found 0", 0, nil},
		{"permutation.chunk", "[permutation]\nchunk = 0\n", "permutation.chunk: must be at least 1, found 0", 0, nil},
		{"model.ridge.inner_folds", ridge + "inner_folds = 0\n", "model.ridge.inner_folds: must be at least 2, found 0", 0, nil},
		{"model.ridge.alphas", ridge + "alphas = []\n", "model.ridge.alphas: at least one penalty is required", 0, nil},
		{"model.kernel_ridge.inner_folds", kernel + "inner_folds = 0\n", "model.kernel_ridge.inner_folds: must be at least 2, found 0", 0, nil},
		{"model.cpm.p_threshold", cpm + "p_threshold = 0.0\n", "model.cpm.p_threshold: must be in (0, 1], found 0", 0, nil},
		{"model.logistic.cs", logit + "cs = [1.0, 0.0]\n", "model.logistic.cs: must be positive and finite, found 0", 0, nil},
		{"model.logistic.inner_folds", logit + "inner_folds = 0\n", "model.logistic.inner_folds: must be at least 2, found 0", 0, nil},
		{"model.logistic.max_iter", logit + "max_iter = 0\n", "model.logistic.max_iter: must be at least 1, found 0", 0, nil},
		{"model.logistic.tol", logit + "tol = 0.0\n", "model.logistic.tol: must be positive and finite, found 0", 0, nil},
		{"model.kernel_logistic.alphas", klogit + "alphas = [0.0]\n", "model.kernel_logistic.alphas: must be positive, found 0", 0, nil},
		{"model.kernel_logistic.max_iter", klogit + "max_iter = 0\n", "model.kernel_logistic.max_iter: must be at least 1, found 0", 0, nil},
		{"model.kernel_logistic.tol", klogit + "tol = 0.0\n", "model.kernel_logistic.tol: must be positive and finite, found 0", 0, nil},
		{"model.network.epochs", net("", "epochs = 0\n"), "model.network.epochs: want at least 1, found 0", 0, nil},
		{"model.network.batch_size", net("", "batch_size = 0\n"), "model.network.batch_size: want at least 1, found 0", 0, nil},
		{"model.network.loss.delta", net(".loss", "delta = 0.0\n"), "model.network.loss.delta: want a finite threshold > 0, found 0", 0, nil},
		{"model.network.optimizer.rate", net(".optimizer", "rate = 0.0\n"), "model.network.optimizer.rate: want a finite learning rate > 0, found 0", 0, nil},
		{"model.network.optimizer.epsilon", net(".optimizer", "epsilon = 0.0\n"), "model.network.optimizer.epsilon: want a value > 0, found 0", 0, nil},
		{"model.network.optimizer.step_epochs", net(".optimizer", "step_epochs = 0\n"), "model.network.optimizer.step_epochs: want at least 1, found 0", 0, nil},
		{"model.network.optimizer.factor", net(".optimizer", "factor = 0.0\n"), "model.network.optimizer.factor: want a value in (0, 1], found 0", 0, nil},

		// Kept.
		{"seed", "seed = 0\n", "", 0, func(e *Experiment) float64 { return float64(e.Seed) }},
		{"cohort.functional.symmetry_tolerance", cohort + fc + "symmetry_tolerance = 0.0\n", "", 0,
			func(e *Experiment) float64 { return *e.Cohort.Functional.SymmetryTolerance }},
		{"cv.inner_validation", "[cv]\ninner_validation = 0.0\n", "", 0, func(e *Experiment) float64 { return *e.CV.InnerValidation }},
		{"permutation.count", "[permutation]\ncount = 0\n", "", 0, func(e *Experiment) float64 { return float64(e.Permutation.Count) }},
		{"drift.p_level", "[drift]\np_level = 0.0\n", "", 0, func(e *Experiment) float64 { return e.Drift.PLevel }},
		{"model.network.slope", net("", "slope = 0.0\n"), "", 0, func(e *Experiment) float64 { return *e.Models[0].Network.Slope }},
		{"model.network.patience", net("", "patience = 0\n"), "", 0, func(e *Experiment) float64 { return float64(*e.Models[0].Network.Patience) }},
		{"model.network.head_dropout", net("", "head_dropout = 0.0\n"), "", 0, func(e *Experiment) float64 { return e.Models[0].Network.HeadDropout }},
		{"model.network.loss.abs", net(".loss", "abs = 0.0\n"), "", 0, func(e *Experiment) float64 { return *e.Models[0].Network.Loss.Abs }},
		{"model.network.loss.squared", net(".loss", "squared = 0.0\n"), "", 0, func(e *Experiment) float64 { return *e.Models[0].Network.Loss.Squared }},
		{"model.network.optimizer.beta1", net(".optimizer", "beta1 = 0.0\n"), "", 0, func(e *Experiment) float64 { return *e.Models[0].Network.Optimizer.Beta1 }},
		{"model.network.optimizer.beta2", net(".optimizer", "beta2 = 0.0\n"), "", 0, func(e *Experiment) float64 { return *e.Models[0].Network.Optimizer.Beta2 }},
		{"model.network.optimizer.momentum", net(".optimizer", "momentum = 0.0\n"), "", 0, func(e *Experiment) float64 { return *e.Models[0].Network.Optimizer.Momentum }},
		{"model.network.optimizer.weight_decay", net(".optimizer", "weight_decay = 0.0\n"), "", 0, func(e *Experiment) float64 { return e.Models[0].Network.Optimizer.WeightDecay }},
		{"model.network.optimizer.clip_norm", net(".optimizer", "clip_norm = 0.0\n"), "", 0, func(e *Experiment) float64 { return e.Models[0].Network.Optimizer.ClipNorm }},
		{"model.network.optimizer.min_rate", net(".optimizer", "min_rate = 0.0\n"), "", 0, func(e *Experiment) float64 { return e.Models[0].Network.Optimizer.MinRate }},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			text := tt.text
			if !strings.HasPrefix(text, "[cohort]") {
				text += minimalCohort
			}
			exp, err := ParseExperiment([]byte(text))
			if tt.want != "" {
				if err == nil || !strings.Contains(err.Error(), tt.want) {
					t.Fatalf("got error %v, want one containing %q", err, tt.want)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if got := tt.get(exp); got != tt.kept {
				t.Errorf("%s = 0 read as %v", tt.name, got)
			}
		})
	}
}

// TestUnsetTakesDefaults: the keys whose 0 is an error or kept still take
// their defaults when left out.
func TestUnsetTakesDefaults(t *testing.T) {
	exp, err := ParseExperiment([]byte("[[model]]\nname = \"m\"\n[model.network]\n[[model.network.branch]]\n" +
		"layers = [{kind = \"n2g\", size = 2}]\n[[model]]\nname = \"r\"\n[model.ridge]\n[[model]]\nname = \"c\"\n[model.cpm]\n" + minimalCohort))
	if err != nil {
		t.Fatal(err)
	}
	n, o := exp.Models[0].Network, exp.Models[0].Network.Optimizer
	got := []float64{float64(*exp.Cohort.MinParticipants), *exp.Cohort.OutlierSD, float64(*exp.CV.Folds), float64(*exp.CV.Repeats),
		float64(*exp.Permutation.Chunk), float64(*exp.Models[1].Ridge.InnerFolds), *exp.Models[2].CPM.PThreshold,
		float64(*n.Epochs), float64(*n.BatchSize), *o.Rate, *o.Beta1, *o.Beta2, *o.Epsilon, float64(*o.StepEpochs), *o.Factor}
	// The defaults examples/reference.toml documents.
	want := []float64{10, 3, 5, 1, 1000, 5, 0.01, 100, 16, 1e-3, 0.9, 0.999, 1e-8, 30, 0.1}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("default %d: got %v, want %v", i, got[i], want[i])
		}
	}
}
