package ops

import (
	"math"
	"testing"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"

	"github.com/skein-neuro/skein/internal/parallel"
)

// poolCase is an op built with the options given, at shapes that make
// several tiles and chunks (dimensions above and off the tile sizes).
type poolCase struct {
	name   string
	shapes []tensor.Shape
	build  func(in gorgonia.Nodes, opts ...Option) (*gorgonia.Node, error)
}

func poolCases() []poolCase {
	const B, P = 3, 70
	return []poolCase{
		{"E2E", []tensor.Shape{sh(B, 2, P, P), sh(5, 2, P), sh(5, 2, P), sh(5)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return E2E(in[0], in[1], in[2], in[3], o...)
		}},
		{"E2E/WithLeakyReLU", []tensor.Shape{sh(B, 2, P, P), sh(5, 2, P), sh(5, 2, P), sh(5)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return E2E(in[0], in[1], in[2], in[3], append(o, WithLeakyReLU(0.2))...)
		}},
		{"E2E/C1", []tensor.Shape{sh(B, 1, P, P), sh(5, 1, P), sh(5, 1, P), sh(5)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return E2E(in[0], in[1], in[2], in[3], o...)
		}},
		{"E2N", []tensor.Shape{sh(B, 3, P, P), sh(66, 3, P), sh(66)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return E2N(in[0], in[1], in[2], o...)
		}},
		{"E2E/NodeMajor", []tensor.Shape{sh(B, 2, P, P), sh(5, 2, P), sh(5, 2, P), sh(5)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return E2E(in[0], in[1], in[2], in[3], append(o, NodeMajor(), WithLeakyReLU(0.2))...)
		}},
		{"E2N/NodeMajor", []tensor.Shape{sh(B, P, 3, P), sh(66, 3, P), sh(66)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return E2N(in[0], in[1], in[2], append(o, NodeMajor())...)
		}},
		{"GraphConv/G<F", []tensor.Shape{sh(B, P, P), sh(B, P, 80), sh(80, 65)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return GraphConv(in[0], in[1], in[2], o...)
		}},
		{"GraphConv/G>F", []tensor.Shape{sh(B, P, P), sh(B, P, 65), sh(65, 80)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return GraphConv(in[0], in[1], in[2], o...)
		}},
		{"Dense", []tensor.Shape{sh(B, 3, P), sh(3*P, 130), sh(130)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return Dense(in[0], in[1], in[2], o...)
		}},
		{"LeakyReLU", []tensor.Shape{sh(B, 3, P, P)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return LeakyReLU(in[0], 0.2, o...)
		}},
		{"Dropout", []tensor.Shape{sh(B, 3, P, P), sh(B, 3, P, P)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return Dropout(in[0], in[1], o...)
		}},
		{"SwapLastAxes", []tensor.Shape{sh(B, 66, P)}, func(in gorgonia.Nodes, o ...Option) (*gorgonia.Node, error) {
			return SwapLastAxes(in[0], o...)
		}},
	}
}

// TestPoolSameBits checks that an op and its gradients give the same
// bits run alone and run on a pool of helpers: the chunks are fixed by
// the shapes, not by the goroutines.
func TestPoolSameBits(t *testing.T) {
	pool := parallel.New(3)
	defer pool.Close()
	for _, c := range poolCases() {
		for _, dt := range []tensor.Dtype{tensor.Float32, tensor.Float64} {
			t.Run(c.name+"/"+dt.String(), func(t *testing.T) {
				alone := newOpGraph(t, dt, c.shapes, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return c.build(in) })
				shared := newOpGraph(t, dt, c.shapes, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return c.build(in, WithPool(pool)) })
				for range 2 { // the second run reuses the buffers
					alone.step(t)
					shared.step(t)
					want := append(gorgonia.Nodes{alone.out}, alone.backward...)
					got := append(gorgonia.Nodes{shared.out}, shared.backward...)
					for i := range want {
						if want[i] == nil {
							continue
						}
						w, g := float64sOf(want[i].Value()), float64sOf(got[i].Value())
						for k := range w {
							if math.Float64bits(w[k]) != math.Float64bits(g[k]) {
								t.Fatalf("%v: element %d is %v on the pool, %v alone", want[i].Op(), k, g[k], w[k])
							}
						}
					}
				}
			})
		}
	}
}

// TestPoolNoAlloc checks that ops on a pool allocate nothing per run once
// their buffers exist.
func TestPoolNoAlloc(t *testing.T) {
	pool := parallel.New(2)
	defer pool.Close()
	for _, c := range poolCases() {
		t.Run(c.name, func(t *testing.T) {
			og := newOpGraph(t, tensor.Float32, c.shapes, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return c.build(in, WithPool(pool)) })
			og.step(t)
			for _, n := range append(gorgonia.Nodes{og.out}, og.backward...) {
				if n == nil {
					continue
				}
				var args []gorgonia.Value
				for it := og.g.From(n.ID()); it.Next(); {
					args = append(args, it.Node().(*gorgonia.Node).Value())
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
