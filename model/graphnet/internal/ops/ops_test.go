package ops

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// opCase is one op at one set of shapes: how to build it, and a plain loop
// that computes its forward pass from the published formula.
type opCase struct {
	name   string
	shapes []tensor.Shape
	noGrad []bool                                       // inputs whose gradient the op does not build
	fill   func(input int, v []float64, rng *rand.Rand) // optional: input values
	build  func(in gorgonia.Nodes) (*gorgonia.Node, error)
	ref    func(in [][]float64) []float64
}

func sh(dims ...int) tensor.Shape { return tensor.Shape(dims) }

// e2eRef is H[n,o,i,j] = Σ_c Σ_k (Wr[o,c,k]·X[n,c,i,k] + Wc[o,c,k]·X[n,c,k,j]) + b[o]
// (Kawahara et al. 2017, the edge-to-edge filter), as a plain loop.
func e2eRef(B, C, O, P int) func([][]float64) []float64 {
	return func(in [][]float64) []float64 {
		x, wr, wc, b := in[0], in[1], in[2], in[3]
		h := make([]float64, B*O*P*P)
		for n := 0; n < B; n++ {
			for o := 0; o < O; o++ {
				for i := 0; i < P; i++ {
					for j := 0; j < P; j++ {
						s := b[o]
						for c := 0; c < C; c++ {
							for k := 0; k < P; k++ {
								s += wr[(o*C+c)*P+k]*x[((n*C+c)*P+i)*P+k] + wc[(o*C+c)*P+k]*x[((n*C+c)*P+k)*P+j]
							}
						}
						h[((n*O+o)*P+i)*P+j] = s
					}
				}
			}
		}
		return h
	}
}

// e2nRef is N[n,o,i] = Σ_c Σ_k W[o,c,k]·X[n,c,i,k] + b[o] (Kawahara et al. 2017).
func e2nRef(B, C, O, P int) func([][]float64) []float64 {
	return func(in [][]float64) []float64 {
		x, w, b := in[0], in[1], in[2]
		y := make([]float64, B*O*P)
		for n := 0; n < B; n++ {
			for o := 0; o < O; o++ {
				for i := 0; i < P; i++ {
					s := b[o]
					for c := 0; c < C; c++ {
						for k := 0; k < P; k++ {
							s += w[(o*C+c)*P+k] * x[((n*C+c)*P+i)*P+k]
						}
					}
					y[(n*O+o)*P+i] = s
				}
			}
		}
		return y
	}
}

// graphConvRef is Y[n] = S[n]·H[n]·W (Kipf & Welling 2017, before the nonlinearity).
func graphConvRef(B, P, F, G int) func([][]float64) []float64 {
	return func(in [][]float64) []float64 {
		s, h, w := in[0], in[1], in[2]
		y := make([]float64, B*P*G)
		for n := 0; n < B; n++ {
			for i := 0; i < P; i++ {
				for g := 0; g < G; g++ {
					var acc float64
					for j := 0; j < P; j++ {
						for f := 0; f < F; f++ {
							acc += s[(n*P+i)*P+j] * h[(n*P+j)*F+f] * w[f*G+g]
						}
					}
					y[(n*P+i)*G+g] = acc
				}
			}
		}
		return y
	}
}

// denseRef is Y[n,g] = Σ_f X[n,f]·W[f,g] + b[g].
func denseRef(B, F, G int) func([][]float64) []float64 {
	return func(in [][]float64) []float64 {
		x, w, b := in[0], in[1], in[2]
		y := make([]float64, B*G)
		for n := 0; n < B; n++ {
			for g := 0; g < G; g++ {
				s := b[g]
				for f := 0; f < F; f++ {
					s += x[n*F+f] * w[f*G+g]
				}
				y[n*G+g] = s
			}
		}
		return y
	}
}

// edgeDenseRef is Y[n,o,i,j] = Σ_c W[o,c]·X[n,c,i,j] + b[o].
func edgeDenseRef(B, C, O, P int) func([][]float64) []float64 {
	return func(in [][]float64) []float64 {
		x, w, b := in[0], in[1], in[2]
		E := P * P
		y := make([]float64, B*O*E)
		for n := 0; n < B; n++ {
			for o := 0; o < O; o++ {
				for e := 0; e < E; e++ {
					s := b[o]
					for c := 0; c < C; c++ {
						s += w[o*C+c] * x[(n*C+c)*E+e]
					}
					y[(n*O+o)*E+e] = s
				}
			}
		}
		return y
	}
}

// awayFromZero fills with values in ±[0.1, 1], so that a finite difference
// of step 1e-5 never crosses the kink of the leaky rectifier.
func awayFromZero(_ int, v []float64, rng *rand.Rand) {
	for i := range v {
		a := 0.1 + 0.9*rng.Float64()
		if rng.IntN(2) == 0 {
			a = -a
		}
		v[i] = a
	}
}

func opCases() []opCase {
	var cases []opCase
	for _, d := range []struct{ B, C, O, P int }{{2, 1, 2, 4}, {2, 2, 2, 5}, {2, 3, 2, 4}, {1, 1, 1, 3}, {3, 2, 1, 5}} {
		B, C, O, P := d.B, d.C, d.O, d.P
		for _, noX := range []bool{false, true} {
			var opts []Option
			if noX {
				opts = append(opts, NoInputGrad())
			}
			cases = append(cases, opCase{
				name:   fmt.Sprintf("E2E/B%dC%dO%dp%d/noInputGrad=%v", B, C, O, P, noX),
				shapes: []tensor.Shape{sh(B, C, P, P), sh(O, C, P), sh(O, C, P), sh(O)},
				noGrad: []bool{noX, false, false, false},
				build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2E(in[0], in[1], in[2], in[3], opts...) },
				ref:    e2eRef(B, C, O, P),
			}, opCase{
				name:   fmt.Sprintf("E2N/B%dC%dO%dp%d/noInputGrad=%v", B, C, O, P, noX),
				shapes: []tensor.Shape{sh(B, C, P, P), sh(O, C, P), sh(O)},
				noGrad: []bool{noX, false, false},
				build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return E2N(in[0], in[1], in[2], opts...) },
				ref:    e2nRef(B, C, O, P),
			})
		}
	}
	for _, slope := range []float64{0.2, 0} {
		const B, C, O, P = 2, 2, 3, 4
		cases = append(cases, opCase{
			name:   fmt.Sprintf("E2E/B%dC%dO%dp%d/WithLeakyReLU(%g)", B, C, O, P, slope),
			shapes: []tensor.Shape{sh(B, C, P, P), sh(O, C, P), sh(O, C, P), sh(O)},
			build: func(in gorgonia.Nodes) (*gorgonia.Node, error) {
				return E2E(in[0], in[1], in[2], in[3], WithLeakyReLU(slope))
			},
			ref: func(in [][]float64) []float64 { return leakyRef(slope, e2eRef(B, C, O, P)(in)) },
		})
	}
	for _, d := range []struct{ B, P, F, G int }{{2, 4, 3, 2}, {2, 5, 2, 3}, {1, 3, 1, 1}} {
		B, P, F, G := d.B, d.P, d.F, d.G
		cases = append(cases, opCase{
			name:   fmt.Sprintf("GraphConv/B%dp%dF%dG%d", B, P, F, G),
			shapes: []tensor.Shape{sh(B, P, P), sh(B, P, F), sh(F, G)},
			noGrad: []bool{true, false, false},
			build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return GraphConv(in[0], in[1], in[2]) },
			ref:    graphConvRef(B, P, F, G),
		}, opCase{
			name:   fmt.Sprintf("Dense/B%d(%dx%d)G%d", B, P, F, G),
			shapes: []tensor.Shape{sh(B, P, F), sh(P*F, G), sh(G)},
			build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Dense(in[0], in[1], in[2]) },
			ref:    denseRef(B, P*F, G),
		})
	}
	for _, s := range []tensor.Shape{sh(2, 3, 4), sh(1, 5, 2)} {
		B, M, K := s[0], s[1], s[2]
		cases = append(cases, opCase{
			name:   fmt.Sprintf("SwapLastAxes/%v", s),
			shapes: []tensor.Shape{s},
			build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return SwapLastAxes(in[0]) },
			ref: func(in [][]float64) []float64 {
				y := make([]float64, len(in[0]))
				for n := 0; n < B; n++ {
					for i := 0; i < M; i++ {
						for j := 0; j < K; j++ {
							y[(n*K+j)*M+i] = in[0][(n*M+i)*K+j]
						}
					}
				}
				return y
			},
		})
	}
	for _, s := range []tensor.Shape{sh(2, 3), sh(2, 2, 3, 3)} {
		s := s
		cases = append(cases, opCase{
			name:   fmt.Sprintf("LeakyReLU/%v", s),
			shapes: []tensor.Shape{s},
			fill:   awayFromZero,
			build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return LeakyReLU(in[0], 0.33) },
			ref: func(in [][]float64) []float64 {
				y := make([]float64, len(in[0]))
				for i, v := range in[0] {
					y[i] = v
					if v < 0 {
						y[i] = 0.33 * v
					}
				}
				return y
			},
		}, opCase{
			name:   fmt.Sprintf("Dropout/%v", s),
			shapes: []tensor.Shape{s, s},
			noGrad: []bool{false, true},
			fill: func(input int, v []float64, rng *rand.Rand) {
				for i := range v {
					v[i] = rng.NormFloat64()
					if input == 1 {
						v[i] = float64(rng.IntN(2)) * 1 / (1 - 0.5)
					}
				}
			},
			build: func(in gorgonia.Nodes) (*gorgonia.Node, error) { return Dropout(in[0], in[1]) },
			ref: func(in [][]float64) []float64 {
				y := make([]float64, len(in[0]))
				for i := range y {
					y[i] = in[0][i] * in[1][i]
				}
				return y
			},
		})
	}
	for _, d := range []struct{ B, C, O, P int }{{2, 2, 3, 4}, {1, 1, 2, 3}, {3, 3, 1, 5}} {
		B, C, O, P := d.B, d.C, d.O, d.P
		for _, noX := range []bool{false, true} {
			var opts []Option
			if noX {
				opts = append(opts, NoInputGrad())
			}
			cases = append(cases, opCase{
				name:   fmt.Sprintf("EdgeDense/B%dC%dO%dp%d/noInputGrad=%v", B, C, O, P, noX),
				shapes: []tensor.Shape{sh(B, C, P, P), sh(O, C), sh(O)},
				noGrad: []bool{noX, false, false},
				build:  func(in gorgonia.Nodes) (*gorgonia.Node, error) { return EdgeDense(in[0], in[1], in[2], opts...) },
				ref:    edgeDenseRef(B, C, O, P),
			})
		}
	}
	cases = append(cases, mergeCases()...)
	return cases
}

func (c opCase) values(seed uint64) [][]float64 {
	rng := rand.New(rand.NewPCG(seed, 7))
	vals := make([][]float64, len(c.shapes))
	for i, s := range c.shapes {
		vals[i] = make([]float64, s.TotalSize())
		if c.fill != nil {
			c.fill(i, vals[i], rng)
			continue
		}
		for j := range vals[i] {
			vals[i][j] = rng.NormFloat64()
		}
	}
	return vals
}

// tensorOf returns a tensor of dtype dt holding v.
func tensorOf(dt tensor.Dtype, s tensor.Shape, v []float64) *tensor.Dense {
	if dt == tensor.Float32 {
		f := make([]float32, len(v))
		for i, x := range v {
			f[i] = float32(x)
		}
		return tensor.New(tensor.WithShape(s.Clone()...), tensor.WithBacking(f))
	}
	return tensor.New(tensor.WithShape(s.Clone()...), tensor.WithBacking(append([]float64(nil), v...)))
}

func float64sOf(v gorgonia.Value) []float64 {
	switch d := v.Data().(type) {
	case []float64:
		return append([]float64(nil), d...)
	case []float32:
		f := make([]float64, len(d))
		for i, x := range d {
			f[i] = float64(x)
		}
		return f
	case float64:
		return []float64{d}
	case float32:
		return []float64{float64(d)}
	}
	panic(fmt.Sprintf("unexpected value %T", v.Data()))
}

// harness is a graph computing the op, the scalar cost Σ out ⊙ r for a
// fixed random r, and the gradients of the cost.
type harness struct {
	in      gorgonia.Nodes
	vals    []*tensor.Dense
	out     gorgonia.Value
	cost    gorgonia.Value
	grads   gorgonia.Nodes // the gradient node of each input, nil when not built
	gradVal []gorgonia.Value
	m       gorgonia.VM
}

func newHarness(t testing.TB, c opCase, dt tensor.Dtype, vals [][]float64, r []float64) *harness {
	t.Helper()
	g := gorgonia.NewGraph()
	h := &harness{}
	var wrt gorgonia.Nodes
	for i, s := range c.shapes {
		v := tensorOf(dt, s, vals[i])
		n := gorgonia.NewTensor(g, dt, len(s), gorgonia.WithShape(s...), gorgonia.WithValue(v), gorgonia.WithName(fmt.Sprintf("in%d", i)))
		h.in = append(h.in, n)
		h.vals = append(h.vals, v)
		if c.noGrad == nil || !c.noGrad[i] {
			wrt = append(wrt, n)
		}
	}
	out, err := c.build(h.in)
	if err != nil {
		t.Fatal(err)
	}
	// cost = Σ out ⊙ r as an inner product of flattened vectors (no tensor
	// reduction along an inner axis is involved, see TestTensorInnerAxisSum).
	size := out.Shape().TotalSize()
	flat, err := gorgonia.Reshape(out, tensor.Shape{size})
	if err != nil {
		t.Fatal(err)
	}
	rn := gorgonia.NewVector(g, dt, gorgonia.WithShape(size), gorgonia.WithValue(tensorOf(dt, tensor.Shape{size}, r)), gorgonia.WithName("r"))
	cost, err := gorgonia.Mul(flat, rn)
	if err != nil {
		t.Fatal(err)
	}
	gorgonia.Read(out, &h.out)
	gorgonia.Read(cost, &h.cost)
	grads, err := gorgonia.Grad(cost, wrt...)
	if err != nil {
		t.Fatal(err)
	}
	h.grads = make(gorgonia.Nodes, len(c.shapes))
	h.gradVal = make([]gorgonia.Value, len(c.shapes))
	k := 0
	for i := range c.shapes {
		if c.noGrad == nil || !c.noGrad[i] {
			h.grads[i] = grads[k]
			gorgonia.Read(grads[k], &h.gradVal[i])
			k++
		}
	}
	h.m = gorgonia.NewTapeMachine(g)
	t.Cleanup(func() { h.m.Close() })
	return h
}

func (h *harness) run(t testing.TB) {
	t.Helper()
	h.m.Reset()
	if err := h.m.RunAll(); err != nil {
		t.Fatal(err)
	}
}

func randomWeights(n int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 11))
	r := make([]float64, n)
	for i := range r {
		r[i] = rng.NormFloat64()
	}
	return r
}

func maxRelErr(got, want []float64) float64 {
	var e float64
	for i := range want {
		d := math.Abs(got[i]-want[i]) / math.Max(1, math.Max(math.Abs(got[i]), math.Abs(want[i])))
		e = math.Max(e, d)
	}
	return e
}

// TestForward compares every op with a plain loop of its published formula,
// in float64 and float32, over two runs (the second reuses the buffers).
func TestForward(t *testing.T) {
	for _, c := range opCases() {
		for _, dt := range []tensor.Dtype{tensor.Float64, tensor.Float32} {
			t.Run(c.name+"/"+dt.String(), func(t *testing.T) {
				vals := c.values(1)
				want := c.ref(vals)
				tol := 1e-12
				if dt == tensor.Float32 {
					tol = 1e-5
				}
				h := newHarness(t, c, dt, vals, randomWeights(len(want), 2))
				for run := 0; run < 2; run++ {
					h.run(t)
					got := float64sOf(h.out)
					if len(got) != len(want) {
						t.Fatalf("got %d values, want %d", len(got), len(want))
					}
					if e := maxRelErr(got, want); e > tol {
						t.Errorf("run %d: max relative error %g > %g\ngot  %v\nwant %v", run, e, tol, got, want)
					}
				}
			})
		}
	}
}

// TestGradFiniteDifference checks every gradient an op builds against
// central differences of the cost Σ out ⊙ r, in float64: relative error
// (|a−n| / max(1, |a|, |n|)) under 1e-6.
func TestGradFiniteDifference(t *testing.T) {
	for _, c := range opCases() {
		t.Run(c.name, func(t *testing.T) {
			vals := c.values(3)
			r := randomWeights(len(c.ref(vals)), 4)
			h := newHarness(t, c, tensor.Float64, vals, r)
			h.run(t)
			checkGradients(t, h, c)
		})
	}
}

// checkGradients compares the gradients of a second run of h (the first
// allocates the buffers, the second reuses them) with central differences
// of the cost: relative error (|a−n| / max(1, |a|, |n|)) under 1e-6.
func checkGradients(t *testing.T, h *harness, c opCase) {
	t.Helper()
	const step = 1e-5
	h.run(t)
	analytic := make([][]float64, len(c.shapes))
	for i := range c.shapes {
		if h.grads[i] != nil {
			analytic[i] = float64sOf(h.gradVal[i])
		}
	}
	for i := range c.shapes {
		if h.grads[i] == nil {
			continue
		}
		data := h.vals[i].Float64s()
		numeric := make([]float64, len(data))
		for j, orig := range data {
			data[j] = orig + step
			h.run(t)
			plus := float64sOf(h.cost)[0]
			data[j] = orig - step
			h.run(t)
			minus := float64sOf(h.cost)[0]
			data[j] = orig
			numeric[j] = (plus - minus) / (2 * step)
		}
		if e := maxRelErr(analytic[i], numeric); e > 1e-6 {
			t.Errorf("input %d: max relative error %g\nanalytic %v\nnumeric  %v", i, e, analytic[i], numeric)
		}
	}
}
