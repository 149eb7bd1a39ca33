package linear

import (
	"context"
	"fmt"
	"math/rand/v2"
	"sync"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// The benchmark cohort has the size the baselines must handle quickly:
// p = 268 regions (35,778 edges), 275 training participants, 55 test
// participants, and a Y of 1000 columns as the permutation test stacks
// them (each a permutation of one invented score).
const (
	benchRegions = 268
	benchTrain   = 275
	benchTest    = 55
	benchColumns = 1000
)

var benchCohort = sync.OnceValues(func() (model.Dataset, []*data.Participant) {
	rng := rand.New(rand.NewPCG(17, 18))
	n := benchTrain + benchTest
	ps := make([]*data.Participant, n)
	score := make([]float64, n)
	for i := range ps {
		f := mat.NewDense(benchRegions, benchRegions, nil)
		for a := 0; a < benchRegions; a++ {
			for b := a + 1; b < benchRegions; b++ {
				v := 0.3 * rng.NormFloat64()
				f.Set(a, b, v)
				f.Set(b, a, v)
			}
		}
		score[i] = f.At(0, 1) - f.At(2, 3) + 0.2*rng.NormFloat64()
		ps[i] = &data.Participant{ID: fmt.Sprintf("sub-%03d", i), Functional: f}
	}
	y := mat.NewDense(benchTrain, benchColumns, nil)
	for j := 0; j < benchColumns; j++ {
		perm := rng.Perm(benchTrain)
		if j == 0 {
			perm = seq(benchTrain)
		}
		for i, k := range perm {
			y.Set(i, j, score[k])
		}
	}
	return model.Dataset{Participants: ps[:benchTrain], Y: y}, ps[benchTrain:]
})

func benchFit(b *testing.B, cfg Config, columns int) {
	train, test := benchCohort()
	train.Y = train.Y.Slice(0, benchTrain, 0, columns).(*mat.Dense)
	cfg.SetDefaults()
	b.ResetTimer()
	for range b.N {
		reg, err := cfg.New(columns, 1)
		if err != nil {
			b.Fatal(err)
		}
		if err := reg.Fit(context.Background(), train, model.Dataset{}); err != nil {
			b.Fatal(err)
		}
		if _, err := reg.Predict(test); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkRidge fits ridge with the default 13-alpha grid and 5 inner
// folds, then predicts 55 participants.
func BenchmarkRidge(b *testing.B) {
	for _, columns := range []int{1, benchColumns} {
		b.Run(fmt.Sprintf("columns=%d", columns), func(b *testing.B) {
			benchFit(b, Config{Ridge: &RidgeConfig{}}, columns)
		})
	}
}

// BenchmarkKernelRidge is BenchmarkRidge for the correlation kernel.
func BenchmarkKernelRidge(b *testing.B) {
	for _, columns := range []int{1, benchColumns} {
		b.Run(fmt.Sprintf("columns=%d", columns), func(b *testing.B) {
			benchFit(b, Config{KernelRidge: &KernelRidgeConfig{}}, columns)
		})
	}
}

// BenchmarkCPM selects networks at p < 0.01 and fits their strengths.
func BenchmarkCPM(b *testing.B) {
	for _, columns := range []int{1, benchColumns} {
		b.Run(fmt.Sprintf("columns=%d", columns), func(b *testing.B) {
			benchFit(b, Config{CPM: &CPMConfig{}}, columns)
		})
	}
}

// benchClassify fits a classification baseline on the benchmark cohort
// with the sign of its (unpermuted) score as a binary label, then gives
// the test participants' probabilities.
func benchClassify(b *testing.B, cfg Config) {
	train, test := benchCohort()
	set := model.LabelledSet{Participants: train.Participants, Classes: 2, Labels: make([]int, benchTrain)}
	for i := range set.Labels {
		if train.Y.At(i, 0) > 0 {
			set.Labels[i] = 1
		}
	}
	cfg.SetDefaults()
	b.ResetTimer()
	for range b.N {
		c, err := cfg.NewClassifier(2, 1)
		if err != nil {
			b.Fatal(err)
		}
		if err := c.Fit(context.Background(), set, model.LabelledSet{}); err != nil {
			b.Fatal(err)
		}
		if _, err := c.PredictProba(test); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkLogistic fits logistic regression with the default 13-C grid
// and 5 inner folds, then predicts 55 participants.
func BenchmarkLogistic(b *testing.B) { benchClassify(b, Config{Logistic: &LogisticConfig{}}) }

// BenchmarkKernelLogistic is BenchmarkLogistic for kernel logistic
// regression with the correlation kernel and the default alphas.
func BenchmarkKernelLogistic(b *testing.B) {
	benchClassify(b, Config{KernelLogistic: &KernelLogisticConfig{}})
}
