package graphnet

import (
	"slices"
	"testing"

	"github.com/skein-neuro/skein/data"
)

// TestCompactInput: a participant whose matrices are kept compact
// (cohort.storage = "float32", data.Compact) gives a branch the input that
// whole matrices of the same float32 values give, in every view.
func TestCompactInput(t *testing.T) {
	const p = 5
	ps, _ := productCohort(1, p, 3)
	pt := ps[0]
	c := &data.Compact{P: p, Functional: make([]float32, data.PackedLen(p)), Structural: make([]float32, data.PackedLen(p))}
	data.Pack(c.Functional, pt.Functional)
	data.Pack(c.Structural, pt.Structural)
	compact := &data.Participant{ID: pt.ID, Compact: c}
	rounded := &data.Participant{ID: pt.ID, Functional: data.Unpack(p, c.Functional), Structural: data.Unpack(p, c.Structural)}
	branch := BranchConfig{Views: []Input{InputFunctional, InputStructural, InputProduct}, Layers: layers(n2g(1))}
	net, err := New(testConfig(Float64, branch), p, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	got, _, err := net.branchInput(net.cfg.Branches[0], "", compact)
	if err != nil {
		t.Fatal(err)
	}
	want, _, err := net.branchInput(net.cfg.Branches[0], "", rounded)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(got, want) {
		t.Errorf("compact input %v, want %v", got, want)
	}
}
