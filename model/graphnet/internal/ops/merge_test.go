package ops

import (
	"fmt"
	"testing"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// mergeCases are the ops that reshape and join branch outputs: Reshape,
// Concat and Product, each with a plain loop of its definition (numpy's
// reshape, concatenate along axis 1 and multiply).
func mergeCases() []opCase {
	var cases []opCase
	for _, c := range []struct{ from, to tensor.Shape }{
		{sh(2, 1, 3, 3), sh(2, 3, 3)},
		{sh(2, 3, 4), sh(2, 12)},
		{sh(3, 2), sh(6)},
	} {
		to := c.to
		cases = append(cases, opCase{
			name:   fmt.Sprintf("Reshape/%v→%v", c.from, to),
			shapes: []tensor.Shape{c.from},
			build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Reshape(in[0], to) },
			ref:    func(in [][]float64) []float64 { return append([]float64(nil), in[0]...) },
		})
	}
	for _, widths := range [][]int{{3}, {2, 3}, {4, 1, 2}, {1, 2, 3, 1, 2}} {
		const B = 3
		var shapes []tensor.Shape
		for _, w := range widths {
			shapes = append(shapes, sh(B, w))
		}
		cases = append(cases, opCase{
			name:   fmt.Sprintf("Concat/B%d%v", B, widths),
			shapes: shapes,
			build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Concat(in...) },
			ref: func(in [][]float64) []float64 {
				var y []float64
				for n := 0; n < B; n++ {
					for i, w := range widths {
						y = append(y, in[i][n*w:(n+1)*w]...)
					}
				}
				return y
			},
		})
	}
	for _, s := range []tensor.Shape{sh(2, 5), sh(3, 2, 4)} {
		cases = append(cases, opCase{
			name:   fmt.Sprintf("Product/%v", s),
			shapes: []tensor.Shape{s, s},
			build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Product(in[0], in[1]) },
			ref: func(in [][]float64) []float64 {
				y := make([]float64, len(in[0]))
				for i := range y {
					y[i] = in[0][i] * in[1][i]
				}
				return y
			},
		})
	}
	return cases
}

// TestReshapeIsAView checks that Reshape copies nothing: its output and
// the gradient it builds share the backing arrays of their inputs, and a
// second run returns the same view.
func TestReshapeIsAView(t *testing.T) {
	g := gorgonia.NewGraph()
	xv := tensorOf(tensor.Float64, sh(2, 1, 3, 3), randomWeights(18, 1))
	x := gorgonia.NewTensor(g, tensor.Float64, 4, gorgonia.WithShape(2, 1, 3, 3), gorgonia.WithValue(xv), gorgonia.WithName("x"))
	y, err := Reshape(x, sh(2, 9))
	if err != nil {
		t.Fatal(err)
	}
	dv := tensorOf(tensor.Float64, sh(2, 9), randomWeights(18, 2))
	dy := gorgonia.NewMatrix(g, tensor.Float64, gorgonia.WithShape(2, 9), gorgonia.WithValue(dv), gorgonia.WithName("dy"))
	grads, err := y.Op().(gorgonia.SDOp).SymDiff(gorgonia.Nodes{x}, y, dy)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name  string
		op    gorgonia.Op
		in    *tensor.Dense
		shape tensor.Shape
	}{{"forward", y.Op(), xv, sh(2, 9)}, {"gradient", grads[0].Op(), dv, sh(2, 1, 3, 3)}} {
		first, err := c.op.Do(c.in)
		if err != nil {
			t.Fatal(err)
		}
		second, err := c.op.Do(c.in)
		if err != nil {
			t.Fatal(err)
		}
		out := second.(*tensor.Dense)
		if first != second {
			t.Errorf("%s: the second run made a new view", c.name)
		}
		if &out.Float64s()[0] != &c.in.Float64s()[0] {
			t.Errorf("%s: the output does not share the backing array of the input", c.name)
		}
		if !out.Shape().Eq(c.shape) {
			t.Errorf("%s: output shape %v, want %v", c.name, out.Shape(), c.shape)
		}
	}
}

// TestMergeErrors checks that mismatched inputs are refused when the graph
// is built.
func TestMergeErrors(t *testing.T) {
	g := gorgonia.NewGraph()
	node := func(name string, s ...int) *gorgonia.Node {
		return gorgonia.NewTensor(g, tensor.Float64, len(s), gorgonia.WithShape(s...), gorgonia.WithName(name), gorgonia.WithInit(gorgonia.Zeroes()))
	}
	a, b, c := node("a", 2, 3), node("b", 3, 3), node("c", 2, 3, 1)
	for name, f := range map[string]func() (*gorgonia.Node, error){
		"Reshape to another size": func() (*gorgonia.Node, error) { return Reshape(a, sh(5)) },
		"Reshape of nil":          func() (*gorgonia.Node, error) { return Reshape(nil, sh(6)) },
		"Concat of nothing":       func() (*gorgonia.Node, error) { return Concat() },
		"Concat of other rows":    func() (*gorgonia.Node, error) { return Concat(a, b) },
		"Concat of a 3-d tensor":  func() (*gorgonia.Node, error) { return Concat(a, c) },
		"Product of other shapes": func() (*gorgonia.Node, error) { return Product(a, b) },
	} {
		if _, err := f(); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}
