package train

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// BenchmarkComBatFold harmonises one training fold of the goal
// size: N = 2,000 participants × 35,000 edges (a 265-region parcellation
// has 34,980), 8 sites, 2 preserved covariates, parametric: the fit and
// its application to the fold. The goal is under 20 s per fold on 2
// cores. Run with
//
//	go test -run '^$' -bench ComBatFold -benchtime 1x ./train
func BenchmarkComBatFold(b *testing.B) {
	benchmarkComBat(b, 35000, HarmonizeParametric)
}

// BenchmarkComBatNonparametric is BenchmarkComBatFold with the
// non-parametric estimate on 5,000 edges: its cost grows with the square
// of the edges, so 35,000 take about 49 times as long.
func BenchmarkComBatNonparametric(b *testing.B) {
	benchmarkComBat(b, 5000, HarmonizeNonparametric)
}

func benchmarkComBat(b *testing.B, G int, method ComBatMethod) {
	const n, S = 2000, 8
	rng := rand.New(rand.NewPCG(1, 2))
	y := mat.NewDense(n, G, nil)
	cov := mat.NewDense(n, 2, nil)
	sites := make([]string, n)
	shift := make([]float64, S*G)
	for i := range shift {
		shift[i] = 0.3 * rng.NormFloat64()
	}
	for i := 0; i < n; i++ {
		s := i % S
		sites[i] = fmt.Sprintf("site-%d", s)
		cov.Set(i, 0, 20+50*rng.Float64())
		cov.Set(i, 1, float64(rng.IntN(2)))
		row := y.RawRowView(i)
		for g := range row {
			row[g] = shift[s*G+g] + 0.01*cov.At(i, 0) + (1+0.1*float64(s))*rng.NormFloat64()
		}
	}
	b.ResetTimer()
	for range b.N {
		cb, err := FitComBat(y, sites, cov, method)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := cb.Apply(y, sites, cov, false); err != nil {
			b.Fatal(err)
		}
	}
}
