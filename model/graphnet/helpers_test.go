package graphnet

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// plantedCohort is an invented cohort of n participants over p regions with
// a planted signal, from a generator of our own: participant i has a latent
// score z_i ~ N(0, 1); the functional matrix is symmetric noise of standard
// deviation 0.3 plus z_i·u·uᵀ for a fixed unit-norm pattern u, with a zero
// diagonal; the structural matrix is a random symmetric non-negative
// matrix; the observed score is y_i = z_i + ε_i with ε_i ~ N(0, noise²).
// Since the matrices carry z but nothing of ε, no model can beat the
// correlation ceiling corr(z, y) = 1/sqrt(1 + noise²) in expectation.
func plantedCohort(n, p int, noise float64, seed uint64) ([]*data.Participant, *mat.Dense) {
	rng := rand.New(rand.NewPCG(seed, 1))
	u := make([]float64, p)
	var norm float64
	for i := range u {
		u[i] = rng.NormFloat64()
		norm += u[i] * u[i]
	}
	for i := range u {
		u[i] /= math.Sqrt(norm)
	}
	ps := make([]*data.Participant, n)
	y := mat.NewDense(n, 1, nil)
	for k := range ps {
		z := rng.NormFloat64()
		f := mat.NewDense(p, p, nil)
		s := mat.NewDense(p, p, nil)
		for i := range p {
			for j := i + 1; j < p; j++ {
				v := 0.3*rng.NormFloat64() + 2*z*u[i]*u[j]
				f.Set(i, j, v)
				f.Set(j, i, v)
				w := rng.Float64()
				s.Set(i, j, w)
				s.Set(j, i, w)
			}
		}
		ps[k] = &data.Participant{ID: fmt.Sprintf("sub-%03d", k+1), Functional: f, Structural: s}
		y.Set(k, 0, z+noise*rng.NormFloat64())
	}
	return ps, y
}

// dataset returns participants [from, to) of ps with their rows of y.
func dataset(ps []*data.Participant, y *mat.Dense, from, to int) model.Dataset {
	_, c := y.Dims()
	return model.Dataset{Participants: ps[from:to], Y: mat.DenseCopyOf(y.Slice(from, to, 0, c))}
}

// withSecondTarget returns the scores y (n × 1) with a second target
// 0.5 − y, whose score of participant missing is missing (NaN).
func withSecondTarget(y *mat.Dense, missing int) *mat.Dense {
	n, _ := y.Dims()
	out := mat.NewDense(n, 2, nil)
	for i := range n {
		out.Set(i, 0, y.At(i, 0))
		out.Set(i, 1, 0.5-y.At(i, 0))
	}
	out.Set(missing, 1, math.NaN())
	return out
}

// testConfig returns a defaulted config with the given branches.
func testConfig(dtype DType, branches ...BranchConfig) Config {
	c := Config{Branches: branches, DType: dtype, BatchSize: new(4), Epochs: new(5)}
	c.SetDefaults()
	return c
}

func layers(ls ...LayerConfig) []LayerConfig { return ls }
func e2e(c int) LayerConfig                  { return LayerConfig{Kind: LayerE2E, Channels: c} }
func edge(c int) LayerConfig                 { return LayerConfig{Kind: LayerEdge, Size: c} }
func e2n(c int) LayerConfig                  { return LayerConfig{Kind: LayerE2N, Channels: c} }
func n2g(s int) LayerConfig                  { return LayerConfig{Kind: LayerN2G, Size: s} }
func gconv(s int) LayerConfig                { return LayerConfig{Kind: LayerGraphConv, Size: s} }
