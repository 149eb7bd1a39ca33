package train

import (
	"fmt"
	"math/rand/v2"
	"syscall"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/connectivity"
)

// benchCovariances returns n Ledoit–Wolf covariances of T × p series
// drawn from one 10-factor model, so that participants differ by
// sampling noise as in a resting-state cohort.
func benchCovariances(n, p, T int, set data.SeriesSettings) *data.Cohort {
	rng := rand.New(rand.NewPCG(1, 2))
	const factors = 10
	load := mat.NewDense(factors, p, nil)
	for k := range factors {
		for j := range p {
			load.Set(k, j, 0.5*rng.NormFloat64())
		}
	}
	c := &data.Cohort{Targets: []string{"score"}, Regions: data.DefaultRegions(p), Series: &set}
	z := mat.NewDense(T, factors, nil)
	x := mat.NewDense(T, p, nil)
	for i := range n {
		for t := range T {
			for k := range factors {
				z.Set(t, k, rng.NormFloat64())
			}
		}
		x.Mul(z, load)
		for t := range T {
			for j := range p {
				x.Set(t, j, x.At(t, j)+rng.NormFloat64())
			}
		}
		cov, _ := connectivity.LedoitWolf(x)
		c.Participants = append(c.Participants, &data.Participant{ID: fmt.Sprintf("sub-%04d", i), Functional: mat.DenseCopyOf(cov), Scores: []float64{0}})
	}
	return c
}

// BenchmarkTangentFold times the tangent space of one fold of 5-fold
// cross-validation at p = 200 and N = 1000 (and N = 100, a tenth of the
// work): the reference mean fitted on the first 80 % of the covariances
// and all N embedded. Run it with
//
//	nice go test ./train -run '^$' -bench 'TangentFold/.*/N=1000' -benchtime 1x -timeout 60m
//
// (the covariances, estimated once at load, are made before the timer).
// Besides the wall time it reports cpu-s/op, the CPU seconds the process
// spent (user + system, getrusage), which a machine shared with other
// work inflates far less than the wall time; on two otherwise idle cores
// the wall time is about half of it.
func BenchmarkTangentFold(b *testing.B) {
	const p, T = 200, 300
	for _, mean := range []data.TangentMean{data.TangentLogEuclidean, data.TangentGeometric} {
		for _, n := range []int{1000, 100} {
			benchTangentFold(b, mean, n, p, T)
		}
	}
}

// benchTangentFold is the sub-benchmark MEAN/N=n of BenchmarkTangentFold.
func benchTangentFold(b *testing.B, mean data.TangentMean, n, p, T int) {
	set := data.SeriesSettings{Estimator: data.EstimatorTangent, Shrinkage: data.ShrinkageLedoitWolf, TangentMean: mean, TangentDiagonal: data.DiagonalDrop}
	b.Run(fmt.Sprintf("%s/N=%d", mean, n), func(b *testing.B) {
		c := benchCovariances(n, p, T, set)
		train := subCohort(c, seq(0, n*4/5))
		before := cpuTime()
		for b.Loop() {
			s := newTangentSpace(&set)
			if err := s.Fit(train); err != nil {
				b.Fatal(err)
			}
			if _, err := s.Apply(c); err != nil {
				b.Fatal(err)
			}
			b.ReportMetric(float64(s.Iterations), "iterations")
		}
		b.ReportMetric((cpuTime()-before).Seconds()/float64(b.N), "cpu-s/op")
	})
}

// cpuTime returns the user and system CPU time of the process so far.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

func seq(from, to int) []int {
	out := make([]int, 0, to-from)
	for i := from; i < to; i++ {
		out = append(out, i)
	}
	return out
}
