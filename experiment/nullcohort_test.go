package experiment

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// confoundedNullRunner returns a runner on a null cohort whose one score
// depends on age and sex only (plus noise) and whose connectomes are
// independent of scores and covariates, with age and sex as confounds, the
// mean predictor and ridge, and a permutation test of perms permutations.
func confoundedNullRunner(t *testing.T, seed int64, perms int) (*Experiment, *train.Runner) {
	t.Helper()
	sc, err := synth.Generate(synth.Config{N: 70, P: 8, Seed: seed, Null: true, Targets: 1, TimePoints: 100})
	if err != nil {
		t.Fatal(err)
	}
	if err := sc.Preprocess(data.Preprocess{}); err != nil {
		t.Fatal(err)
	}
	// age in years (20 to 70) and sex coded 0/1, synth.CovariateNames order.
	rng := rand.New(rand.NewPCG(uint64(seed), 11))
	for _, p := range sc.Participants {
		age, sex := p.Covariates[0], p.Covariates[1]
		p.Scores[0] = 50 + 0.4*(age-45) + 4*sex + 3*rng.NormFloat64()
	}
	exp := &Experiment{
		Seed: seed,
		CV:   train.CV{Folds: new(5), Repeats: new(1), Confounds: []string{"age", "sex"}},
		Models: []train.ModelConfig{
			{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}},
			{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}},
		},
		Permutation: Permutation{Count: perms},
	}
	exp.SetDefaults()
	return exp, &train.Runner{Design: exp.Design(), Cohort: sc.Cohort, Jobs: 1}
}

// TestPermutationValidWithConfounds: on null cohorts whose score depends
// on the confounds only, the permutation p-value of every checked metric,
// correlations and errors alike, is uniform for the mean predictor and for
// ridge. A permutation test is exact when the permuted rows are
// exchangeable under the null (Phipson & Smyth 2010, Stat. Appl. Genet.
// Mol. Biol. 9:39); exchanging scores and covariates together keeps the
// permuted runs' confound regression like the observed one's. Checked over
// 100 cohorts with the Kolmogorov–Smirnov test against the uniform
// distribution (reject at p < 0.01), and by the share of p < 0.05, which
// must stay at most 10%: with 99 permutations p < 0.05 means p ≤ 4/100,
// so under exactness the count is binomial(100, 0.04) and reaches 11 with
// probability 0.002 (scipy.stats.binom.sf(10, 100, 0.04)). Permuting the
// scores alone gave p(MAE) = 0.01 on every cohort.
func TestPermutationValidWithConfounds(t *testing.T) {
	if testing.Short() {
		t.Skip("-short: repeats 100 permutation tests")
	}
	const cohorts, perms = 100, 99
	// The metrics checked; each is checked for every model.
	metrics := []eval.Metric{eval.MetricPearsonWithin, eval.MetricPearson, eval.MetricMAE}
	models := []string{"mean", "ridge"}
	ps := make(map[string][]float64) // "model metric" -> p-values, one per cohort
	for seed := int64(1); seed <= cohorts; seed++ {
		exp, r := confoundedNullRunner(t, seed, perms)
		res, err := r.Run(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		nulls, err := PermutationTest(context.Background(), r, exp.Permutation, eval.Summarize(res.Predictions, 0, true))
		if err != nil {
			t.Fatal(err)
		}
		if len(nulls) != len(models) {
			t.Fatalf("seed %d: %d null distributions, want %d", seed, len(nulls), len(models))
		}
		for _, nd := range nulls {
			for _, m := range metrics {
				key := fmt.Sprintf("%s %s", nd.Model, m)
				ps[key] = append(ps[key], nd.P.Get(m))
			}
		}
	}
	for _, model := range models {
		for _, m := range metrics {
			key := fmt.Sprintf("%s %s", model, m)
			p := ps[key]
			if model == "mean" && (m == eval.MetricPearson || m == eval.MetricPearsonWithin) {
				// With confounds regressed out the mean predictor's
				// predictions are constant to rounding: r is undefined,
				// and so is its p-value.
				for _, v := range p {
					if !math.IsNaN(v) {
						t.Errorf("%s: p-value %v, want NaN for constant predictions", key, v)
						break
					}
				}
				continue
			}
			low := 0
			for _, v := range p {
				if v < 0.05 {
					low++
				}
			}
			d, ksP := eval.KSUniform(p)
			t.Logf("%s: KS D = %.3f, p = %.3f; %d of %d p-values < 0.05", key, d, ksP, low, len(p))
			if !(ksP >= 0.01) {
				t.Errorf("%s: permutation p-values on null cohorts are not uniform: KS D = %.3f, p = %.2g", key, d, ksP)
			}
			if float64(low) > 0.1*float64(len(p)) {
				t.Errorf("%s: %d of %d permutation p-values < 0.05 on null cohorts, want at most 10%%", key, low, len(p))
			}
		}
	}
}
