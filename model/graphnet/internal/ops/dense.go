package ops

import (
	"fmt"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// GraphConv is the graph convolution of Kipf & Welling (2017) before its
// nonlinearity, one operator per sample:
//
//	Y[n] = S[n]·H[n]·W
//
// s is (B, p, p), the graph operator of each sample (e.g. a normalized
// adjacency with self loops; a constant: no gradient with respect to s is
// built), h is (B, p, F) node features, w is (F, G); the result is
// (B, p, G). It is differentiable with respect to h (without NoInputGrad)
// and w.
func GraphConv(s, h, w *gorgonia.Node, opts ...Option) (*gorgonia.Node, error) {
	shapes, err := nodeShapes("GraphConv", []*gorgonia.Node{s, h, w}, 3, 3, 2)
	if err != nil {
		return nil, err
	}
	ss, hs, ws := shapes[0], shapes[1], shapes[2]
	B, P, F, G := ss[0], ss[1], ws[0], ws[1]
	if ss[2] != P {
		return nil, fmt.Errorf("ops: GraphConv: s has shape %v, want (B, p, p)", ss)
	}
	if hs[0] != B || hs[1] != P || hs[2] != F {
		return nil, fmt.Errorf("ops: GraphConv: h has shape %v, want (%d, %d, %d) (B, p, F) to match s %v and w %v", hs, B, P, F, ss, ws)
	}
	o, err := collect("GraphConv", opts, false, false)
	if err != nil {
		return nil, err
	}
	op := &graphConvOp{
		base: newBase(fmt.Sprintf("GraphConv(%v·%v)", hs, ws), shapes, tensor.Shape{B, P, G}, o.pool),
		B:    B, P: P, F: F, G: G,
		opts:     o,
		tmpShape: tensor.Shape{B, P, min(F, G)},
	}
	return gorgonia.ApplyOp(op, s, h, w)
}

type graphConvOp struct {
	base
	B, P, F, G int
	opts       options
	tmp        buffer // H·W (B, p, G) or S·H (B, p, F), whichever is smaller
	tmpShape   tensor.Shape
}

func graphConvForward[T float](op *graphConvOp, s, h, w, tmp, y []T) {
	B, P, F, G := op.B, op.P, op.F, op.G
	if G <= F {
		parallelGemm(&op.ts, false, false, B*P, G, F, 1, h, F, w, G, 0, tmp, G) // tmp = H·W, all samples at once
		forEach(&op.ts, B, filterDims{B: B, P: P, C: G}, [2]T{}, kOperatorTimes, s, tmp, y)
		return
	}
	forEach(&op.ts, B, filterDims{B: B, P: P, C: F}, [2]T{}, kOperatorTimes, s, h, tmp) // tmp = S·H
	parallelGemm(&op.ts, false, false, B*P, G, F, 1, tmp, F, w, G, 0, y, G)
}

// operatorTimesOf sets Y[n] = S[n]·X[n] for sample n, with S[n] p × p and
// X[n] p × d.C: s = s, x, y.
func operatorTimesOf[T float](l *loop[T], n int) {
	s, x, y := l.s[0], l.s[1], l.s[2]
	P, K := l.d.P, l.d.C
	serialGemm(false, false, P, K, P, 1, s[n*P*P:], P, x[n*P*K:], K, 0, y[n*P*K:], K)
}

// operatorTransposeTimesOf is operatorTimesOf with S[n]ᵀ.
func operatorTransposeTimesOf[T float](l *loop[T], n int) {
	s, x, y := l.s[0], l.s[1], l.s[2]
	P, K := l.d.P, l.d.C
	serialGemm(true, false, P, K, P, 1, s[n*P*P:], P, x[n*P*K:], K, 0, y[n*P*K:], K)
}

func (op *graphConvOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	tmp := op.tmp.get(dt, op.tmpShape)
	if dt == tensor.Float64 {
		graphConvForward(op, slice[float64](in[0]), slice[float64](in[1]), slice[float64](in[2]), slice[float64](tmp), slice[float64](out))
	} else {
		graphConvForward(op, slice[float32](in[0]), slice[float32](in[1]), slice[float32](in[2]), slice[float32](tmp), slice[float32](out))
	}
	return out, nil
}

func (op *graphConvOp) DiffWRT(int) []bool { return []bool{false, !op.opts.noInputGrad, true} }

// SymDiff: with V[n] = S[n]ᵀ·dY[n], dH[n] = V[n]·Wᵀ and dW = Σ_n H[n]ᵀ·V[n].
func (op *graphConvOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	s, h, w := inputs[0], inputs[1], inputs[2]
	B, P, F, G := op.B, op.P, op.F, op.G
	adj := &adjointOp{base: op.derive("GraphConvAdjoint", []tensor.Shape{op.in[0], op.out}, op.out), B: B, P: P, G: G}
	v, err := gorgonia.ApplyOp(adj, s, grad)
	if err != nil {
		return nil, err
	}
	grads := make(gorgonia.Nodes, 3)
	if !op.opts.noInputGrad {
		if grads[1], err = matMul(&op.base, "GraphConvGradH", v, w, false, true, B*P, F, G, op.in[1]); err != nil {
			return nil, err
		}
	}
	if grads[2], err = matMul(&op.base, "GraphConvGradW", h, v, true, false, F, G, B*P, op.in[2]); err != nil {
		return nil, err
	}
	return grads, nil
}

// adjointOp: inputs s (B, p, p), g (B, p, G); V[n] = S[n]ᵀ·G[n].
type adjointOp struct {
	base
	B, P, G int
}

func adjoint[T float](op *adjointOp, s, g, v []T) {
	forEach(&op.ts, op.B, filterDims{B: op.B, P: op.P, C: op.G}, [2]T{}, kOperatorTransposeTimes, s, g, v)
}

func (op *adjointOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		adjoint(op, slice[float64](in[0]), slice[float64](in[1]), slice[float64](out))
	} else {
		adjoint(op, slice[float32](in[0]), slice[float32](in[1]), slice[float32](out))
	}
	return out, nil
}

// Dense is a fully connected layer with its bias, fused:
//
//	Y[n,g] = Σ_f X[n,f]·W[f,g] + b[g]
//
// x is (B, d1, d2, …) and is read as (B, F) with F = d1·d2·… (row-major,
// as gorgonia stores it: no reshape node is needed after E2N or a graph
// convolution), w is (F, G), b is (G); the result is (B, G). It is
// differentiable with respect to x (without NoInputGrad), w and b.
func Dense(x, w, b *gorgonia.Node, opts ...Option) (*gorgonia.Node, error) {
	if x == nil {
		return nil, fmt.Errorf("ops: Dense: x is nil")
	}
	if x.Dims() < 2 {
		return nil, fmt.Errorf("ops: Dense: x has shape %v, want (B, …) with at least 2 dimensions", x.Shape())
	}
	shapes, err := nodeShapes("Dense", []*gorgonia.Node{x, w, b}, x.Dims(), 2, 1)
	if err != nil {
		return nil, err
	}
	xs, ws := shapes[0], shapes[1]
	B, F, G := xs[0], xs.TotalSize()/max(xs[0], 1), ws[1]
	if ws[0] != F {
		return nil, fmt.Errorf("ops: Dense: w has shape %v, want (%d, G) to match x %v (%d features per sample)", ws, F, xs, F)
	}
	if shapes[2][0] != G {
		return nil, fmt.Errorf("ops: Dense: b has shape %v, want (%d)", shapes[2], G)
	}
	o, err := collect("Dense", opts, false, false)
	if err != nil {
		return nil, err
	}
	op := &denseOp{
		base: newBase(fmt.Sprintf("Dense(%v·%v)", xs, ws), shapes, tensor.Shape{B, G}, o.pool),
		B:    B, F: F, G: G,
		opts: o,
	}
	return gorgonia.ApplyOp(op, x, w, b)
}

type denseOp struct {
	base
	B, F, G int
	opts    options
}

func denseForward[T float](op *denseOp, x, w, b, y []T) {
	G := op.G
	for n := 0; n < op.B; n++ {
		copy(y[n*G:][:G], b[:G])
	}
	parallelGemm(&op.ts, false, false, op.B, G, op.F, 1, x, op.F, w, G, 1, y, G)
}

func (op *denseOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		denseForward(op, slice[float64](in[0]), slice[float64](in[1]), slice[float64](in[2]), slice[float64](out))
	} else {
		denseForward(op, slice[float32](in[0]), slice[float32](in[1]), slice[float32](in[2]), slice[float32](out))
	}
	return out, nil
}

func (op *denseOp) DiffWRT(int) []bool { return []bool{!op.opts.noInputGrad, true, true} }

// SymDiff: dX = dY·Wᵀ, dW = Xᵀ·dY, db = Σ_n dY[n,·].
func (op *denseOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	x, w := inputs[0], inputs[1]
	B, F, G := op.B, op.F, op.G
	grads := make(gorgonia.Nodes, 3)
	var err error
	if !op.opts.noInputGrad {
		if grads[0], err = matMul(&op.base, "DenseGradX", grad, w, false, true, B, F, G, op.in[0]); err != nil {
			return nil, err
		}
	}
	if grads[1], err = matMul(&op.base, "DenseGradW", x, grad, true, false, F, G, B, op.in[1]); err != nil {
		return nil, err
	}
	cs := &colSumOp{base: op.derive("DenseGradB", []tensor.Shape{op.out}, op.in[2]), rows: B, cols: G}
	if grads[2], err = gorgonia.ApplyOp(cs, grad); err != nil {
		return nil, err
	}
	return grads, nil
}

// matMul applies a matMulOp of parent's gradient: the result, of shape out, holds the m×n
// matrix op(A)·op(B), where op(A) is m×k and op(B) k×n, whatever the
// shapes of a and b (their row-major data are read as those matrices).
func matMul(parent *base, name string, a, b *gorgonia.Node, ta, tb bool, m, n, k int, out tensor.Shape) (*gorgonia.Node, error) {
	op := &matMulOp{base: parent.derive(name, []tensor.Shape{a.Shape(), b.Shape()}, out), ta: ta, tb: tb, m: m, n: n, k: k}
	return gorgonia.ApplyOp(op, a, b)
}

type matMulOp struct {
	base
	ta, tb  bool
	m, n, k int
}

func matMulKernel[T float](op *matMulOp, a, b, c []T) {
	lda, ldb := op.k, op.n
	if op.ta {
		lda = op.m
	}
	if op.tb {
		ldb = op.k
	}
	parallelGemm(&op.ts, op.ta, op.tb, op.m, op.n, op.k, 1, a, lda, b, ldb, 0, c, op.n)
}

func (op *matMulOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		matMulKernel(op, slice[float64](in[0]), slice[float64](in[1]), slice[float64](out))
	} else {
		matMulKernel(op, slice[float32](in[0]), slice[float32](in[1]), slice[float32](out))
	}
	return out, nil
}

// colSumOp: the column sums of a rows×cols matrix.
type colSumOp struct {
	base
	rows, cols int
}

func colSum[T float](op *colSumOp, a, s []T) {
	s = s[:op.cols]
	clear(s)
	for r := 0; r < op.rows; r++ {
		for j, v := range a[r*op.cols:][:op.cols] {
			s[j] += v
		}
	}
}

func (op *colSumOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		colSum(op, slice[float64](in[0]), slice[float64](out))
	} else {
		colSum(op, slice[float32](in[0]), slice[float32](out))
	}
	return out, nil
}

// SwapLastAxes transposes each sample: y[n,j,i] = x[n,i,j], x (B, m, k)
// -> (B, k, m). It turns the (B, channels, p) output of E2N into the
// (B, p, features) node features of GraphConv, faster than gorgonia's
// general Transpose and without allocating per step. Its gradient is
// SwapLastAxes of the output gradient.
func SwapLastAxes(x *gorgonia.Node, opts ...Option) (*gorgonia.Node, error) {
	shapes, err := nodeShapes("SwapLastAxes", []*gorgonia.Node{x}, 3)
	if err != nil {
		return nil, err
	}
	o, err := collect("SwapLastAxes", opts, false, false)
	if err != nil {
		return nil, err
	}
	s := shapes[0]
	op := &swapOp{base: newBase(fmt.Sprintf("SwapLastAxes%v", s), shapes, tensor.Shape{s[0], s[2], s[1]}, o.pool)}
	return gorgonia.ApplyOp(op, x)
}

type swapOp struct{ base }

func swapLast[T float](s tensor.Shape, x, y []T) {
	B, M, K := s[0], s[1], s[2]
	for n := 0; n < B; n++ {
		src, dst := x[n*M*K:][:M*K], y[n*M*K:][:M*K]
		for i := 0; i < M; i++ {
			for j, v := range src[i*K:][:K] {
				dst[j*M+i] = v
			}
		}
	}
}

func (op *swapOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		swapLast(op.in[0], slice[float64](in[0]), slice[float64](out))
	} else {
		swapLast(op.in[0], slice[float32](in[0]), slice[float32](out))
	}
	return out, nil
}

func (op *swapOp) DiffWRT(int) []bool { return []bool{true} }

func (op *swapOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	back := &swapOp{base: op.derive("SwapLastAxesGrad", []tensor.Shape{op.out}, op.in[0])}
	dx, err := gorgonia.ApplyOp(back, grad)
	return gorgonia.Nodes{dx}, err
}
