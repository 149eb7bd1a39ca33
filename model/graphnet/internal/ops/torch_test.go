package ops

import (
	"os"
	"path/filepath"
	"testing"

	"codeberg.org/sbinet/npyio"
	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// readNpy reads a float64 .npy fixture.
func readNpy(t *testing.T, name string) ([]float64, tensor.Shape) {
	t.Helper()
	path := filepath.Join("..", "..", "..", "..", "testdata", "ops", name+".npy")
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r, err := npyio.NewReader(f)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	var v []float64
	if err := r.Read(&v); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	s := tensor.Shape(append([]int(nil), r.Header.Descr.Shape...))
	if len(s) == 0 {
		s = tensor.Shape{1}
	}
	return v, s
}

// TestAgainstPyTorch compares forward outputs and the gradients of
// L = Σ out ⊙ r with PyTorch 1.13 (Debian's python3-torch, a general-purpose
// reference library); the fixtures and the script that made them are in
// testdata/ops (make_fixtures.py builds each op from torch's conv2d, bmm,
// matmul, transpose and leaky_relu). Tolerances: 1e-10 in float64, 1e-5 relative in
// float32 (|got−want| / max(1, |want|)).
func TestAgainstPyTorch(t *testing.T) {
	cases := []struct {
		name   string
		inputs []string
		noGrad []bool
		build  func(in gorgonia.Nodes) (*gorgonia.Node, error)
	}{
		{"e2e_c3", []string{"x", "wr", "wc", "b"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2E(in[0], in[1], in[2], in[3]) }},
		{"e2e_c1", []string{"x", "wr", "wc", "b"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2E(in[0], in[1], in[2], in[3]) }},
		{"e2e_leaky", []string{"x", "wr", "wc", "b"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) {
			return E2E(in[0], in[1], in[2], in[3], WithLeakyReLU(0.2))
		}},
		{"e2n_c3", []string{"x", "w", "b"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2N(in[0], in[1], in[2]) }},
		{"e2n_c1", []string{"x", "w", "b"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2N(in[0], in[1], in[2]) }},
		{"leaky", []string{"x"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return LeakyReLU(in[0], 0.2) }},
		{"gconv_narrow", []string{"s", "h", "w"}, []bool{true, false, false}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return GraphConv(in[0], in[1], in[2]) }},
		{"gconv_wide", []string{"s", "h", "w"}, []bool{true, false, false}, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return GraphConv(in[0], in[1], in[2]) }},
		{"swap", []string{"x"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return SwapLastAxes(in[0]) }},
		{"dense", []string{"x", "w", "b"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Dense(in[0], in[1], in[2]) }},
		// From make_merge_fixtures.py: torch's reshape, cat and mul.
		{"reshape", []string{"x"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Reshape(in[0], tensor.Shape{3, 8}) }},
		{"concat", []string{"a", "b", "c"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Concat(in...) }},
		{"product", []string{"a", "b"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Product(in[0], in[1]) }},
		// From make_edge_fixtures.py: torch.nn.Conv2d with a 1 × 1 kernel.
		{"edge_c2", []string{"x", "w", "b"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return EdgeDense(in[0], in[1], in[2]) }},
		{"edge_c1", []string{"x", "w", "b"}, nil, func(in gorgonia.Nodes) (*gorgonia.Node, error) { return EdgeDense(in[0], in[1], in[2]) }},
	}
	for _, fc := range cases {
		for _, dt := range []tensor.Dtype{tensor.Float64, tensor.Float32} {
			t.Run(fc.name+"/"+dt.String(), func(t *testing.T) {
				tol := 1e-10
				if dt == tensor.Float32 {
					tol = 1e-5
				}
				c := opCase{name: fc.name, noGrad: fc.noGrad, build: fc.build}
				vals := make([][]float64, len(fc.inputs))
				for i, in := range fc.inputs {
					var s tensor.Shape
					vals[i], s = readNpy(t, fc.name+"."+in)
					c.shapes = append(c.shapes, s)
				}
				r, _ := readNpy(t, fc.name+".r")
				want, _ := readNpy(t, fc.name+".out")
				h := newHarness(t, c, dt, vals, r)
				h.run(t)
				if e := maxRelErr(float64sOf(h.out), want); e > tol {
					t.Errorf("output: max relative error %g > %g", e, tol)
				}
				for i, in := range fc.inputs {
					if h.grads[i] == nil {
						continue
					}
					want, _ := readNpy(t, fc.name+".d"+in)
					if e := maxRelErr(float64sOf(h.gradVal[i]), want); e > tol {
						t.Errorf("d%s: max relative error %g > %g", in, e, tol)
					}
				}
			})
		}
	}
}
