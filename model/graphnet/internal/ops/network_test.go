package ops

import (
	"math"
	"strings"
	"testing"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

func leakyRef(slope float64, x []float64) []float64 {
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = v
		if v < 0 {
			y[i] = slope * v
		}
	}
	return y
}

// networkCases chain the ops as a network does, with one node read by two
// ops, so that gradients flow from op to op and are summed by gorgonia.
func networkCases() []opCase {
	return []opCase{edgeNetwork(false), edgeNetwork(true), fusedNetwork(false), fusedNetwork(true), graphNetwork()}
}

// fusedNetwork is E2E-E2N-Dense with the E2E output node-major and read by
// the E2N alone, so that the E2E's backward pass sums the E2N's input
// gradient as it makes it (e2nSumsOp); with leaky, through the fused
// rectifier.
func fusedNetwork(leaky bool) opCase {
	const B, C, P, O1, O2, G = 2, 2, 5, 3, 4, 2
	name := "Network/E2E-E2N-Dense/fused"
	e2eOpts := []Option{NodeMajor()}
	if leaky {
		name += "/WithLeakyReLU"
		e2eOpts = append(e2eOpts, WithLeakyReLU(0.1))
	}
	return opCase{
		name: name,
		shapes: []tensor.Shape{
			sh(B, C, P, P),                     // 0 x
			sh(O1, C, P), sh(O1, C, P), sh(O1), // 1-3 E2E
			sh(O2, O1, P), sh(O2), // 4-5 E2N
			sh(O2*P, G), sh(G), // 6-7 Dense
		},
		build: func(in gorgonia.Nodes) (*gorgonia.Node, error) {
			h, err := E2E(in[0], in[1], in[2], in[3], e2eOpts...)
			if err != nil {
				return nil, err
			}
			n, err := E2N(h, in[4], in[5], NodeMajor())
			if err != nil {
				return nil, err
			}
			return Dense(n, in[6], in[7])
		},
		ref: func(in [][]float64) []float64 {
			h := e2eRef(B, C, O1, P)(in[0:4])
			if leaky {
				h = leakyRef(0.1, h)
			}
			n := e2nRef(B, O1, O2, P)([][]float64{h, in[4], in[5]})
			return denseRef(B, O2*P, G)([][]float64{n, in[6], in[7]})
		},
	}
}

// edgeNetwork chains E2E, E2E and two E2N (with nodeMajor, the hidden E2E
// hands its output to both E2N node-major, through the rectifier).
func edgeNetwork(nodeMajor bool) opCase {
	const B, P, O1, O2, O3, G = 2, 4, 2, 2, 3, 2
	name := "Network/E2E-E2E-E2N-Dense+E2N-Dense"
	var layout []Option
	if nodeMajor {
		name += "/NodeMajor"
		layout = []Option{NodeMajor()}
	}
	return opCase{
		name: name,
		shapes: []tensor.Shape{
			sh(B, 1, P, P),                     // 0 x
			sh(O1, 1, P), sh(O1, 1, P), sh(O1), // 1-3 first E2E
			sh(O2, O1, P), sh(O2, O1, P), sh(O2), // 4-6 hidden E2E
			sh(O3, O2, P), sh(O3), // 7-8 E2N a
			sh(O3, O2, P), sh(O3), // 9-10 E2N b
			sh(O3*P, G), sh(G), // 11-12 Dense a
			sh(O3*P, G), sh(G), // 13-14 Dense b
		},
		noGrad: []bool{true, false, false, false, false, false, false, false, false, false, false, false, false, false, false},
		build: func(in gorgonia.Nodes) (*gorgonia.Node, error) {
			h1, err := E2E(in[0], in[1], in[2], in[3], NoInputGrad())
			if err != nil {
				return nil, err
			}
			if h1, err = LeakyReLU(h1, 0.1); err != nil {
				return nil, err
			}
			h2, err := E2E(h1, in[4], in[5], in[6], layout...)
			if err != nil {
				return nil, err
			}
			if h2, err = LeakyReLU(h2, 0.1); err != nil {
				return nil, err
			}
			na, err := E2N(h2, in[7], in[8], layout...)
			if err != nil {
				return nil, err
			}
			nb, err := E2N(h2, in[9], in[10], layout...)
			if err != nil {
				return nil, err
			}
			ya, err := Dense(na, in[11], in[12])
			if err != nil {
				return nil, err
			}
			yb, err := Dense(nb, in[13], in[14])
			if err != nil {
				return nil, err
			}
			return gorgonia.Add(ya, yb)
		},
		ref: func(in [][]float64) []float64 {
			h1 := leakyRef(0.1, e2eRef(B, 1, O1, P)(in[0:4]))
			h2 := leakyRef(0.1, e2eRef(B, O1, O2, P)([][]float64{h1, in[4], in[5], in[6]}))
			na := e2nRef(B, O2, O3, P)([][]float64{h2, in[7], in[8]})
			nb := e2nRef(B, O2, O3, P)([][]float64{h2, in[9], in[10]})
			ya := denseRef(B, O3*P, G)([][]float64{na, in[11], in[12]})
			yb := denseRef(B, O3*P, G)([][]float64{nb, in[13], in[14]})
			for i := range ya {
				ya[i] += yb[i]
			}
			return ya
		},
	}
}

// graphNetwork chains two graph convolutions and a dense layer.
func graphNetwork() opCase {
	const B, P, F1, F2, G = 2, 4, 3, 2, 2
	return opCase{
		name: "Network/GraphConv-GraphConv-Dense",
		shapes: []tensor.Shape{
			sh(B, P, P), sh(B, P, F1), // 0 s, 1 h (data)
			sh(F1, 4), sh(4, F2), // 2, 3 weights
			sh(P*F2, G), sh(G), // 4, 5 dense
		},
		noGrad: []bool{true, true, false, false, false, false},
		build: func(in gorgonia.Nodes) (*gorgonia.Node, error) {
			h, err := GraphConv(in[0], in[1], in[2], NoInputGrad())
			if err != nil {
				return nil, err
			}
			if h, err = LeakyReLU(h, 0.2); err != nil {
				return nil, err
			}
			if h, err = GraphConv(in[0], h, in[3]); err != nil {
				return nil, err
			}
			return Dense(h, in[4], in[5])
		},
		ref: func(in [][]float64) []float64 {
			h := leakyRef(0.2, graphConvRef(B, P, F1, 4)(in[0:3]))
			h = graphConvRef(B, P, 4, F2)([][]float64{in[0], h, in[3]})
			return denseRef(B, P*F2, G)([][]float64{h, in[4], in[5]})
		},
	}
}

// TestNetwork checks chains of ops, forward against the composed plain
// loops and backward against central finite differences (as
// TestForward and TestGradFiniteDifference do for single ops).
func TestNetwork(t *testing.T) {
	for _, c := range networkCases() {
		t.Run(c.name, func(t *testing.T) {
			vals := c.values(9)
			want := c.ref(vals)
			h := newHarness(t, c, tensor.Float64, vals, randomWeights(len(want), 10))
			if strings.Contains(c.name, "fused") && !hasOp[*e2nSumsOp](h.in[0].Graph()) {
				t.Fatal("the backward pass has no e2nSumsOp")
			}
			h.run(t)
			if e := maxRelErr(float64sOf(h.out), want); e > 1e-12 {
				t.Errorf("forward: max relative error %g", e)
			}
			checkGradients(t, h, c)
		})
	}
}

// hasOp reports whether g has a node whose op is an O.
func hasOp[O gorgonia.Op](g *gorgonia.ExprGraph) bool {
	for _, n := range g.AllNodes() {
		if _, ok := n.Op().(O); ok {
			return true
		}
	}
	return false
}

// TestNoInputGrad checks that NoInputGrad builds no gradient for the data
// input: asking gorgonia.Grad for it fails instead of computing it.
func TestNoInputGrad(t *testing.T) {
	g := gorgonia.NewGraph()
	x := gorgonia.NewTensor(g, tensor.Float64, 4, gorgonia.WithShape(1, 1, 3, 3), gorgonia.WithName("x"), gorgonia.WithInit(gorgonia.Ones()))
	w := gorgonia.NewTensor(g, tensor.Float64, 3, gorgonia.WithShape(2, 1, 3), gorgonia.WithName("w"), gorgonia.WithInit(gorgonia.Ones()))
	b := gorgonia.NewVector(g, tensor.Float64, gorgonia.WithShape(2), gorgonia.WithName("b"), gorgonia.WithInit(gorgonia.Zeroes()))
	n, err := E2N(x, w, b, NoInputGrad())
	if err != nil {
		t.Fatal(err)
	}
	cost, err := gorgonia.Sum(n)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := gorgonia.Grad(cost, x); err == nil {
		t.Error("gorgonia.Grad with respect to x succeeded with NoInputGrad")
	}
}

// TestOptionErrors checks that options are refused where they do not apply.
func TestOptionErrors(t *testing.T) {
	g := gorgonia.NewGraph()
	x := gorgonia.NewTensor(g, tensor.Float64, 4, gorgonia.WithShape(1, 1, 3, 3), gorgonia.WithName("x"), gorgonia.WithInit(gorgonia.Ones()))
	w := gorgonia.NewTensor(g, tensor.Float64, 3, gorgonia.WithShape(2, 1, 3), gorgonia.WithName("w"), gorgonia.WithInit(gorgonia.Ones()))
	b := gorgonia.NewVector(g, tensor.Float64, gorgonia.WithShape(2), gorgonia.WithName("b"), gorgonia.WithInit(gorgonia.Zeroes()))
	if _, err := E2N(x, w, b, WithLeakyReLU(0.1)); err == nil {
		t.Error("E2N accepted WithLeakyReLU")
	}
	for _, slope := range []float64{-0.1, math.NaN(), math.Inf(1)} {
		if _, err := E2E(x, w, w, b, WithLeakyReLU(slope)); err == nil {
			t.Errorf("E2E accepted WithLeakyReLU(%v)", slope)
		}
	}
	if _, err := E2E(x, w, b, b); err == nil {
		t.Error("E2E accepted a wc of shape (2)")
	}
	flat := gorgonia.NewMatrix(g, tensor.Float64, gorgonia.WithShape(9, 2), gorgonia.WithName("flat"), gorgonia.WithInit(gorgonia.Ones()))
	if _, err := Dense(x, flat, b, NodeMajor()); err == nil {
		t.Error("Dense accepted NodeMajor")
	}
	wide := gorgonia.NewTensor(g, tensor.Float64, 4, gorgonia.WithShape(1, 3, 2, 4), gorgonia.WithName("wide"), gorgonia.WithInit(gorgonia.Ones()))
	w2 := gorgonia.NewTensor(g, tensor.Float64, 3, gorgonia.WithShape(2, 2, 3), gorgonia.WithName("w2"), gorgonia.WithInit(gorgonia.Ones()))
	if _, err := E2N(wide, w2, b, NodeMajor()); err == nil {
		t.Error("E2N NodeMajor accepted x of shape (1, 3, 2, 4)")
	}
}
