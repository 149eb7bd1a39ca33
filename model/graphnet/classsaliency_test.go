package graphnet

import (
	"context"
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// TestClassifierEdgeImportanceMatchesFiniteDifferences checks the saliency
// of a classifier's decision values against central differences of its
// members' logits: for two classes the decision value is z₁ − z₀, for three
// z_c − z̄, and for an ensemble the map is the mean of the members'. The
// symmetrized map must equal the mean over participants and members of
// (F_ij ∂s/∂F_ij + F_ji ∂s/∂F_ji) / 2 (common practice, no source; the
// same check as TestEdgeImportanceMatchesFiniteDifferences for scores).
func TestClassifierEdgeImportanceMatchesFiniteDifferences(t *testing.T) {
	const p = 6
	for _, tt := range []struct {
		classes, ensemble int
	}{{2, 1}, {3, 1}, {2, 2}} {
		t.Run(fmt.Sprintf("%d classes, ensemble %d", tt.classes, tt.ensemble), func(t *testing.T) {
			all := labelledCohort(16, p, tt.classes, 0.4, 11)
			cfg := classifierConfig(tt.ensemble)
			cfg.DType = Float64
			cfg.Epochs = new(4)
			cfg.BatchSize = new(4)
			c, err := NewClassifier(cfg, p, tt.classes, 5)
			if err != nil {
				t.Fatal(err)
			}
			if err := c.Fit(context.Background(), labelledSubset(all, seq(0, 12)), labelledSubset(all, seq(12, 16))); err != nil {
				t.Fatal(err)
			}
			probe := all.Participants[:5]
			maps, err := c.EdgeImportance(probe)
			if err != nil {
				t.Fatal(err)
			}
			C := model.ExplainedClasses(tt.classes)
			if len(maps) != C {
				t.Fatalf("%d maps, want %d (one view)", len(maps), C)
			}
			// decision returns the decision value s_v of member n for q
			// with F_ij moved by delta.
			decision := func(n *Network, q *data.Participant, ij [2]int, delta float64, v int) float64 {
				f := mat.DenseCopyOf(q.Functional)
				f.Set(ij[0], ij[1], f.At(ij[0], ij[1])+delta)
				z, err := n.Predict([]*data.Participant{{ID: q.ID, Functional: f, Structural: q.Structural}})
				if err != nil {
					t.Fatal(err)
				}
				row := z.RawRowView(0)
				if tt.classes == 2 {
					return row[1] - row[0]
				}
				var mean float64
				for _, x := range row {
					mean += x / float64(len(row))
				}
				return row[v] - mean
			}
			const h = 1e-6
			for _, e := range [][2]int{{0, 1}, {2, 4}, {3, 5}} {
				for v := range C {
					var want float64
					for _, n := range c.Members() {
						for _, q := range probe {
							for _, ij := range [][2]int{e, {e[1], e[0]}} {
								g := (decision(n, q, ij, h, v) - decision(n, q, ij, -h, v)) / (2 * h)
								want += q.Functional.At(ij[0], ij[1]) * g / 2
							}
						}
					}
					want /= float64(len(probe) * len(c.Members()))
					got := maps[v].At(e[0], e[1])
					t.Logf("edge %v, decision value %d: saliency %.6g, finite differences %.6g", e, v, got, want)
					if math.Abs(got-want) > 1e-5*math.Abs(want)+1e-9 {
						t.Errorf("edge %v, decision value %d: saliency %.9g, finite differences %.9g", e, v, got, want)
					}
					if maps[v].At(e[1], e[0]) != got {
						t.Errorf("edge %v: map not symmetric", e)
					}
				}
			}
		})
	}
}
