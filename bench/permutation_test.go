package bench

import (
	"context"
	"fmt"
	"sync"
	"testing"
	"time"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/internal/blas"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// permutationCohort is an invented cohort of 275 participants with 268
// regions (35,778 edges), preprocessed with the defaults.
var permutationCohort = sync.OnceValues(func() (*data.Cohort, error) {
	sc, err := synth.Generate(synth.Config{N: 275, P: 268, Seed: 7, Targets: 1})
	if err != nil {
		return nil, err
	}
	if err := sc.Preprocess(data.Preprocess{}); err != nil {
		return nil, err
	}
	return sc.Cohort, nil
})

// BenchmarkRidgePermutation times the whole permutation-test path
// (eval.PermutationTest: 1000 permutations of the score, each a 5-fold
// cross-validated ridge with the default alpha grid and inner folds,
// scored like the observed run) at N = 275, p = 268, for several chunk
// sizes (permutations fitted at once as extra score columns) and for
// units in parallel with single-threaded BLAS against sequential units
// with threaded BLAS. Run it with -benchtime 1x; it reports seconds per
// test and permutations per second. The goal is under 30 s.
func BenchmarkRidgePermutation(b *testing.B) {
	cohort, err := permutationCohort()
	if err != nil {
		b.Fatal(err)
	}
	const perms = 1000
	layouts := []struct{ jobs, threads int }{{2, 1}, {1, 2}}
	for _, chunk := range []int{250, 500, 1000} {
		for _, l := range layouts {
			b.Run(fmt.Sprintf("chunk=%d/jobs=%d/threads=%d", chunk, l.jobs, l.threads), func(b *testing.B) {
				defer blas.SetThreads(blas.SetThreads(l.threads))
				exp := &experiment.Experiment{
					Seed:        1,
					CV:          train.CV{Folds: new(5), Repeats: new(1)},
					Models:      []train.ModelConfig{{Name: "ridge", Config: linear.Config{Ridge: &linear.RidgeConfig{}}}},
					Permutation: experiment.Permutation{Count: perms, Chunk: new(chunk)},
				}
				exp.SetDefaults()
				r := &train.Runner{Design: exp.Design(), Cohort: cohort, Jobs: l.jobs}
				ctx := context.Background()
				res, err := r.Run(ctx)
				if err != nil {
					b.Fatal(err)
				}
				observed := eval.Summarize(res.Predictions, 0, true)
				b.ResetTimer()
				start := time.Now()
				for b.Loop() {
					if _, err := experiment.PermutationTest(ctx, r, exp.Permutation, observed); err != nil {
						b.Fatal(err)
					}
				}
				per := time.Since(start).Seconds() / float64(b.N)
				b.ReportMetric(per, "s/test")
				b.ReportMetric(perms/per, "perms/s")
			})
		}
	}
}
