package train

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// TestEdgeScalerCompact: the per-edge standardization fitted and applied
// on participants kept compact (cohort.storage = "float32") equals, bit
// for bit, the one on whole matrices of the same float32 values: the step
// widens each matrix and computes as before.
func TestEdgeScalerCompact(t *testing.T) {
	const p, n = 6, 12
	rng := rand.New(rand.NewPCG(19, 1))
	compact := &data.Cohort{Regions: data.DefaultRegions(p)}
	rounded := &data.Cohort{Regions: data.DefaultRegions(p)}
	for i := range n {
		c := &data.Compact{P: p}
		for _, dst := range []*[]float32{&c.Functional, &c.Structural} {
			m := mat.NewDense(p, p, nil)
			for a := range p {
				for b := a + 1; b < p; b++ {
					v := rng.NormFloat64()
					m.Set(a, b, v)
					m.Set(b, a, v)
				}
			}
			*dst = make([]float32, data.PackedLen(p))
			data.Pack(*dst, m)
		}
		id := fmt.Sprintf("sub-%02d", i)
		compact.Participants = append(compact.Participants, &data.Participant{ID: id, Compact: c})
		rounded.Participants = append(rounded.Participants, &data.Participant{ID: id,
			Functional: data.Unpack(p, c.Functional), Structural: data.Unpack(p, c.Structural)})
	}
	fitted := func(c *data.Cohort) (*EdgeScaler, *data.Cohort) {
		e := &EdgeScaler{Functional: true, Structural: true}
		if err := e.Fit(c); err != nil {
			t.Fatal(err)
		}
		out, err := e.Apply(c)
		if err != nil {
			t.Fatal(err)
		}
		return e, out
	}
	ec, oc := fitted(compact)
	er, or := fitted(rounded)
	if !slices.Equal(ec.FunctionalMean, er.FunctionalMean) || !slices.Equal(ec.StructuralSD, er.StructuralSD) {
		t.Errorf("fitted on compact participants: means %v, SDs %v; want %v, %v", ec.FunctionalMean, ec.StructuralSD, er.FunctionalMean, er.StructuralSD)
	}
	for i := range oc.Participants {
		if !mat.Equal(oc.Participants[i].Functional, or.Participants[i].Functional) ||
			!mat.Equal(oc.Participants[i].Structural, or.Participants[i].Structural) {
			t.Fatalf("participant %d standardized differently from compact storage", i)
		}
	}
}
