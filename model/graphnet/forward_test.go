package graphnet

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// TestForwardAgainstNumPy checks the predictions of a two-branch network
// (e2e, e2n, graph_conv after e2n, n2g, concat, head) against
// testdata/graphnet/forward.json, which forward_fixture.py computes with
// NumPy from the layer formulas of Kawahara et al. (2017) and Kipf &
// Welling (2017), using the weight names and shapes of the saved-model
// format.
func TestForwardAgainstNumPy(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("..", "..", "testdata", "graphnet", "forward.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fix struct {
		P, Targets   int
		Weights      map[string][]float64
		Shapes       map[string][]int
		Participants []struct {
			Functional, Structural [][]float64
			Prediction             []float64
		}
	}
	if err := json.Unmarshal(raw, &fix); err != nil {
		t.Fatal(err)
	}
	for _, dtype := range []DType{Float64, Float32} {
		cfg := testConfig(dtype,
			BranchConfig{Layers: layers(e2e(2), e2n(3), n2g(4))},
			BranchConfig{Input: "propagated", Operator: "renormalized-adjacency", Layers: layers(e2n(2), gconv(3), n2g(4))})
		cfg.Head = []int{5}
		net, err := New(cfg, fix.P, fix.Targets, 1)
		if err != nil {
			t.Fatal(err)
		}
		if len(net.params) != len(fix.Weights) {
			t.Fatalf("%d weight arrays, fixture has %d", len(net.params), len(fix.Weights))
		}
		for _, p := range net.params {
			w, ok := fix.Weights[p.name]
			if !ok || !slices.Equal(fix.Shapes[p.name], p.shape) {
				t.Fatalf("array %s %v: fixture has shape %v", p.name, []int(p.shape), fix.Shapes[p.name])
			}
			copyInto(p.value, 0, w)
		}
		var ps []*data.Participant
		for _, fp := range fix.Participants {
			ps = append(ps, &data.Participant{ID: "sub-x", Functional: denseOf(fix.P, fp.Functional), Structural: denseOf(fix.P, fp.Structural)})
		}
		pred, err := net.Predict(ps)
		if err != nil {
			t.Fatal(err)
		}
		tol := 1e-12
		if dtype == "float32" {
			tol = 1e-4
		}
		for i, fp := range fix.Participants {
			for k, want := range fp.Prediction {
				if got := pred.At(i, k); math.Abs(got-want) > tol*math.Max(1, math.Abs(want)) {
					t.Errorf("%s: participant %d target %d: %v, NumPy %v", dtype, i, k, got, want)
				}
			}
		}
	}
}

func denseOf(p int, rows [][]float64) *mat.Dense {
	m := mat.NewDense(p, p, nil)
	for i, r := range rows {
		m.SetRow(i, r)
	}
	return m
}
