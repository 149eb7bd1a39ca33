package graphnet

import (
	"context"
	"math"
	"sort"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/data/synth"
	"github.com/skein-neuro/skein/model"
)

// TestEdgeImportanceMatchesFiniteDifferences checks the saliency of a
// small float64 network with two branches reading F (an e2e branch and a
// graph-convolution branch) against central differences of Predict:
// perturbing F_ij changes both branches' inputs, so the symmetrized map
// must equal the mean over participants of
// (F_ij ∂ŷ/∂F_ij + F_ji ∂ŷ/∂F_ji) / 2 (common practice, no source).
func TestEdgeImportanceMatchesFiniteDifferences(t *testing.T) {
	const p = 8
	ps, y := plantedCohort(12, p, 0.5, 3)
	y2 := mat.NewDense(12, 2, nil)
	for i := range 12 {
		y2.Set(i, 0, y.At(i, 0))
		y2.Set(i, 1, -0.5*y.At(i, 0)+0.1*float64(i%3))
	}
	cfg := testConfig("float64",
		BranchConfig{Input: InputFunctional, Layers: layers(e2e(2), e2n(3), n2g(4))},
		BranchConfig{Input: InputFunctional, Layers: layers(gconv(3), n2g(4))},
	)
	cfg.Head = []int{5}
	net, err := New(cfg, p, 2, 7)
	if err != nil {
		t.Fatal(err)
	}
	if err := net.Fit(context.Background(), dataset(ps, y2, 0, 12), model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	probe := ps[:5]
	maps, err := net.EdgeImportance(probe)
	if err != nil {
		t.Fatal(err)
	}
	const h = 1e-6
	for _, e := range [][2]int{{0, 1}, {2, 5}, {6, 7}} {
		for target := range 2 {
			var want float64
			for _, q := range probe {
				for _, ij := range [][2]int{e, {e[1], e[0]}} {
					deriv := func(delta float64) float64 {
						f := mat.DenseCopyOf(q.Functional)
						f.Set(ij[0], ij[1], f.At(ij[0], ij[1])+delta)
						pred, err := net.Predict([]*data.Participant{{ID: q.ID, Functional: f, Structural: q.Structural}})
						if err != nil {
							t.Fatal(err)
						}
						return pred.At(0, target)
					}
					g := (deriv(h) - deriv(-h)) / (2 * h)
					want += q.Functional.At(ij[0], ij[1]) * g / 2
				}
			}
			want /= float64(len(probe))
			// Each branch is a view with maps of its own (view v, target
			// t at v·2 + t); perturbing F moves both views' inputs.
			if len(maps) != 2*2 {
				t.Fatalf("%d maps, want 2 views × 2 targets", len(maps))
			}
			got := maps[target].At(e[0], e[1]) + maps[2+target].At(e[0], e[1])
			if math.Abs(got-want) > 1e-5*math.Abs(want)+1e-9 {
				t.Errorf("edge %v, target %d: saliency %.9g, finite differences %.9g", e, target, got, want)
			}
			t.Logf("edge %v, target %d: saliency %.6g, finite differences %.6g", e, target, got, want)
			for _, m := range []*mat.Dense{maps[target], maps[2+target]} {
				if m.At(e[1], e[0]) != m.At(e[0], e[1]) {
					t.Errorf("edge %v, target %d: map not symmetric", e, target)
				}
			}
		}
	}
}

// TestEdgeImportancePlantedEdgesRankFirst trains a network on a synthetic
// cohort whose scores depend on a planted set of functional edges
// (data/synth's Truth) and checks that the saliency ranks the planted
// edges above the others: the probability that a planted edge has the
// larger |importance| (ROC area) must be at least 0.8, our own bar.
func TestEdgeImportancePlantedEdgesRankFirst(t *testing.T) {
	c, err := synth.Generate(synth.Config{N: 200, P: 12, Targets: 1, Seed: 8, Ceiling: 0.95})
	if err != nil {
		t.Fatal(err)
	}
	ps := c.Participants
	y := mat.NewDense(len(ps), 1, nil)
	var mean, ss float64
	for _, q := range ps {
		mean += q.Scores[0] / float64(len(ps))
	}
	for _, q := range ps {
		ss += (q.Scores[0] - mean) * (q.Scores[0] - mean)
	}
	sd := math.Sqrt(ss / float64(len(ps)-1))
	for i, q := range ps {
		q.Functional = atanhOffDiagonal(q.Functional)
		y.Set(i, 0, (q.Scores[0]-mean)/sd)
	}
	cfg := testConfig("float32", BranchConfig{Input: InputFunctional, Layers: layers(e2n(8), n2g(8))})
	cfg.Epochs = new(60)
	cfg.BatchSize = new(16)
	net, err := New(cfg, c.P(), 1, 4)
	if err != nil {
		t.Fatal(err)
	}
	if err := net.Fit(context.Background(), dataset(ps, y, 0, 160), model.Dataset{}); err != nil {
		t.Fatal(err)
	}
	maps, err := net.EdgeImportance(ps[160:])
	if err != nil {
		t.Fatal(err)
	}
	planted := make(map[[2]int]bool)
	for _, e := range append(append([]synth.Edge(nil), c.Truth[0].Positive...), c.Truth[0].Negative...) {
		planted[[2]int{min(e.I, e.J), max(e.I, e.J)}] = true
	}
	var in, out []float64
	p := c.P()
	for i := range p {
		for j := i + 1; j < p; j++ {
			v := math.Abs(maps[0].At(i, j))
			if planted[[2]int{i, j}] {
				in = append(in, v)
			} else {
				out = append(out, v)
			}
		}
	}
	sort.Float64s(out)
	var wins float64
	for _, v := range in {
		wins += float64(sort.SearchFloat64s(out, v))
	}
	auc := wins / float64(len(in)*len(out))
	t.Logf("%d planted of %d edges, ROC area %.3f", len(in), len(in)+len(out), auc)
	if auc < 0.8 {
		t.Errorf("planted edges rank above the others with probability %.3f, want ≥ 0.8", auc)
	}
}

func atanhOffDiagonal(f *mat.Dense) *mat.Dense {
	p, _ := f.Dims()
	z := mat.NewDense(p, p, nil)
	for i := range p {
		for j := range p {
			if i != j {
				z.Set(i, j, math.Atanh(math.Max(-0.999999, math.Min(0.999999, f.At(i, j)))))
			}
		}
	}
	return z
}

// BenchmarkEdgeImportance computes the saliency of an untrained two-branch
// network at p = 268 for a test fold of 55 participants (a fifth of 275).
func BenchmarkEdgeImportance(b *testing.B) {
	const p, n = 268, 55
	ps, _ := plantedCohort(n, p, 0.5, 1)
	cfg := testConfig("float32",
		BranchConfig{Input: InputFunctional, Layers: layers(e2e(8), e2n(16), n2g(32))},
		BranchConfig{Input: InputFunctional, Layers: layers(gconv(16), n2g(32))},
	)
	cfg.BatchSize = new(16)
	net, err := New(cfg, p, 2, 1)
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for range b.N {
		if _, err := net.EdgeImportance(ps); err != nil {
			b.Fatal(err)
		}
	}
}
