package ops

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// opGraph is one op, its backward ops fed with a fixed output gradient,
// and a tape machine running both: the op's share of a training step.
type opGraph struct {
	g        *gorgonia.ExprGraph
	out      *gorgonia.Node
	backward gorgonia.Nodes
	m        gorgonia.VM
}

func randomTensor(dt tensor.Dtype, s tensor.Shape, rng *rand.Rand) *tensor.Dense {
	v := make([]float64, s.TotalSize())
	for i := range v {
		v[i] = rng.NormFloat64()
	}
	return tensorOf(dt, s, v)
}

func newOpGraph(tb testing.TB, dt tensor.Dtype, shapes []tensor.Shape, build func(gorgonia.Nodes) (*gorgonia.Node, error)) *opGraph {
	tb.Helper()
	rng := rand.New(rand.NewPCG(5, 6))
	g := gorgonia.NewGraph()
	var in gorgonia.Nodes
	for i, s := range shapes {
		in = append(in, gorgonia.NewTensor(g, dt, len(s), gorgonia.WithShape(s...), gorgonia.WithValue(randomTensor(dt, s, rng)), gorgonia.WithName(fmt.Sprintf("in%d", i))))
	}
	out, err := build(in)
	if err != nil {
		tb.Fatal(err)
	}
	os := out.Shape()
	dOut := gorgonia.NewTensor(g, dt, len(os), gorgonia.WithShape(os...), gorgonia.WithValue(randomTensor(dt, os, rng)), gorgonia.WithName("dOut"))
	grads, err := out.Op().(gorgonia.SDOp).SymDiff(in, out, dOut)
	if err != nil {
		tb.Fatal(err)
	}
	m := gorgonia.NewTapeMachine(g)
	tb.Cleanup(func() { m.Close() })
	return &opGraph{g: g, out: out, backward: grads, m: m}
}

func (og *opGraph) step(tb testing.TB) {
	if err := og.m.RunAll(); err != nil {
		tb.Fatal(err)
	}
	og.m.Reset()
}

type benchCase struct {
	name   string
	shapes []tensor.Shape
	build  func(gorgonia.Nodes) (*gorgonia.Node, error)
}

// benchCases are the reference shapes: batch 16, p = 116 and 268 regions.
func benchCases() []benchCase {
	var cs []benchCase
	for _, p := range []int{116, 268} {
		const B = 16
		cs = append(cs,
			benchCase{fmt.Sprintf("E2E_first_B%d_C1_O32_p%d", B, p), []tensor.Shape{sh(B, 1, p, p), sh(32, 1, p), sh(32, 1, p), sh(32)},
				func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2E(in[0], in[1], in[2], in[3], NoInputGrad()) }},
			benchCase{fmt.Sprintf("E2E+LeakyReLU_first_B%d_C1_O32_p%d", B, p), []tensor.Shape{sh(B, 1, p, p), sh(32, 1, p), sh(32, 1, p), sh(32)},
				func(in gorgonia.Nodes) (*gorgonia.Node, error) {
					return E2E(in[0], in[1], in[2], in[3], NoInputGrad(), WithLeakyReLU(0.33))
				}},
			benchCase{fmt.Sprintf("E2E_hidden_B%d_C32_O32_p%d", B, p), []tensor.Shape{sh(B, 32, p, p), sh(32, 32, p), sh(32, 32, p), sh(32)},
				func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2E(in[0], in[1], in[2], in[3]) }},
			benchCase{fmt.Sprintf("E2N_B%d_C32_O64_p%d", B, p), []tensor.Shape{sh(B, 32, p, p), sh(64, 32, p), sh(64)},
				func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2N(in[0], in[1], in[2]) }},
			benchCase{fmt.Sprintf("LeakyReLU_B%d_C32_p%d", B, p), []tensor.Shape{sh(B, 32, p, p)},
				func(in gorgonia.Nodes) (*gorgonia.Node, error) { return LeakyReLU(in[0], 0.33) }},
			benchCase{fmt.Sprintf("GraphConv_B%d_p%d_F64_G32", B, p), []tensor.Shape{sh(B, p, p), sh(B, p, 64), sh(64, 32)},
				func(in gorgonia.Nodes) (*gorgonia.Node, error) { return GraphConv(in[0], in[1], in[2]) }},
			benchCase{fmt.Sprintf("SwapLastAxes_B%d_C64_p%d", B, p), []tensor.Shape{sh(B, 64, p)},
				func(in gorgonia.Nodes) (*gorgonia.Node, error) { return SwapLastAxes(in[0]) }},
			benchCase{fmt.Sprintf("Dense_B%d_O64xp%d_G128", B, p), []tensor.Shape{sh(B, 64, p), sh(64*p, 128), sh(128)},
				func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Dense(in[0], in[1], in[2]) }},
		)
	}
	return cs
}

// BenchmarkForwardBackward runs each op forward and backward (all its
// gradients, from a fixed output gradient) through a tape machine, as a
// training step does. Allocations reported are per step.
func BenchmarkForwardBackward(b *testing.B) {
	for _, c := range benchCases() {
		for _, dt := range []tensor.Dtype{tensor.Float32, tensor.Float64} {
			b.Run(c.name+"/"+dt.String(), func(b *testing.B) {
				og := newOpGraph(b, dt, c.shapes, c.build)
				og.step(b) // allocate the buffers
				b.ReportAllocs()
				b.ResetTimer()
				for range b.N {
					og.step(b)
				}
			})
		}
	}
}

// TestNoAllocSteadyState checks that, once their buffers exist, the ops
// and their backward ops allocate nothing when run (the tape machine
// itself allocates a little per instruction; see the benchmarks).
func TestNoAllocSteadyState(t *testing.T) {
	cases := []benchCase{
		{"E2E", []tensor.Shape{sh(2, 2, 5, 5), sh(3, 2, 5), sh(3, 2, 5), sh(3)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2E(in[0], in[1], in[2], in[3]) }},
		{"E2E/WithLeakyReLU", []tensor.Shape{sh(2, 2, 5, 5), sh(3, 2, 5), sh(3, 2, 5), sh(3)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) {
			return E2E(in[0], in[1], in[2], in[3], WithLeakyReLU(0.1))
		}},
		{"E2E/C1", []tensor.Shape{sh(2, 1, 5, 5), sh(3, 1, 5), sh(3, 1, 5), sh(3)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2E(in[0], in[1], in[2], in[3]) }},
		{"E2N", []tensor.Shape{sh(2, 2, 5, 5), sh(3, 2, 5), sh(3)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2N(in[0], in[1], in[2]) }},
		{"EdgeDense", []tensor.Shape{sh(2, 2, 5, 5), sh(3, 2), sh(3)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return EdgeDense(in[0], in[1], in[2]) }},
		{"LeakyReLU", []tensor.Shape{sh(2, 3, 4)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return LeakyReLU(in[0], 0.1) }},
		{"GraphConv", []tensor.Shape{sh(2, 4, 4), sh(2, 4, 3), sh(3, 2)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return GraphConv(in[0], in[1], in[2]) }},
		{"Dense", []tensor.Shape{sh(2, 3, 4), sh(12, 5), sh(5)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Dense(in[0], in[1], in[2]) }},
		{"Dropout", []tensor.Shape{sh(2, 3), sh(2, 3)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Dropout(in[0], in[1]) }},
		{"SwapLastAxes", []tensor.Shape{sh(2, 3, 4)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return SwapLastAxes(in[0]) }},
		{"Reshape", []tensor.Shape{sh(2, 3, 4)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Reshape(in[0], sh(2, 12)) }},
		{"Concat", []tensor.Shape{sh(2, 3), sh(2, 4)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Concat(in...) }},
		{"Product", []tensor.Shape{sh(2, 3), sh(2, 3)}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Product(in[0], in[1]) }},
	}
	for _, c := range cases {
		for _, dt := range []tensor.Dtype{tensor.Float32, tensor.Float64} {
			t.Run(c.name+"/"+dt.String(), func(t *testing.T) {
				og := newOpGraph(t, dt, c.shapes, c.build)
				nodes := append(gorgonia.Nodes{og.out}, og.backward...)
				for _, n := range nodes {
					if n == nil {
						continue
					}
					var args []gorgonia.Value
					for it := og.g.From(n.ID()); it.Next(); { // the children, in order
						ch := it.Node().(*gorgonia.Node)
						if ch.Value() == nil {
							og.step(t) // values of op outputs (inputs of backward ops)
						}
						args = append(args, ch.Value())
					}
					if _, err := n.Op().Do(args...); err != nil {
						t.Fatal(err)
					}
					if a := testing.AllocsPerRun(10, func() { n.Op().Do(args...) }); a != 0 {
						t.Errorf("%v allocates %v times per run", n.Op(), a)
					}
				}
			})
		}
	}
}
