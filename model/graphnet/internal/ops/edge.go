package ops

import (
	"fmt"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// EdgeDense is a dense layer applied to every edge, its weights shared
// by all edges (a convolution with a 1 × 1 kernel over the p × p grid):
//
//	Y[n,o,i,j] = Σ_c W[o,c]·X[n,c,i,j] + b[o]
//
// x is (B, C, p, p), the C channels of every edge; w is (O, C), b is (O);
// the result is (B, O, p, p). Edge (i, j) of the output depends on edge
// (i, j) of the input alone, so each output channel is symmetric whenever
// every input channel is. It is differentiable with respect to x (without
// NoInputGrad), w and b.
func EdgeDense(x, w, b *gorgonia.Node, opts ...Option) (*gorgonia.Node, error) {
	shapes, err := nodeShapes("EdgeDense", []*gorgonia.Node{x, w, b}, 4, 2, 1)
	if err != nil {
		return nil, err
	}
	xs, ws := shapes[0], shapes[1]
	B, C, P, O := xs[0], xs[1], xs[2], ws[0]
	if xs[3] != P {
		return nil, fmt.Errorf("ops: EdgeDense: x has shape %v, want (B, C, p, p)", xs)
	}
	if ws[1] != C {
		return nil, fmt.Errorf("ops: EdgeDense: w has shape %v, want (O, %d) (O, C) to match x %v", ws, C, xs)
	}
	if shapes[2][0] != O {
		return nil, fmt.Errorf("ops: EdgeDense: b has shape %v, want (%d)", shapes[2], O)
	}
	o, err := collect("EdgeDense", opts, false, false)
	if err != nil {
		return nil, err
	}
	op := &edgeDenseOp{
		base: newBase(fmt.Sprintf("EdgeDense(%v→%d)", xs, O), shapes, tensor.Shape{B, O, P, P}, o.pool),
		dims: filterDims{B: B, C: C, O: O, P: P},
		opts: o,
	}
	return gorgonia.ApplyOp(op, x, w, b)
}

type edgeDenseOp struct {
	base
	dims filterDims
	opts options
}

func (op *edgeDenseOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		forEach(&op.ts, op.dims.B, op.dims, [2]float64{}, kEdgeDense, slice[float64](in[0]), slice[float64](in[1]), slice[float64](in[2]), slice[float64](out))
	} else {
		forEach(&op.ts, op.dims.B, op.dims, [2]float32{}, kEdgeDense, slice[float32](in[0]), slice[float32](in[1]), slice[float32](in[2]), slice[float32](out))
	}
	return out, nil
}

// edgeDenseOf sets Y[n] = W·X[n] + b for sample n, X[n] read as a C × p²
// and Y[n] as an O × p² matrix: s = x, w, b, y.
func edgeDenseOf[T float](l *loop[T], n int) {
	x, w, b, y := l.s[0], l.s[1], l.s[2], l.s[3]
	C, O, E := l.d.C, l.d.O, l.d.P*l.d.P
	yn := y[n*O*E:][:O*E]
	for o, v := range b[:O] {
		row := yn[o*E:][:E]
		for e := range row {
			row[e] = v
		}
	}
	serialGemm(false, false, O, E, C, 1, w, C, x[n*C*E:], E, 1, yn, E)
}

func (op *edgeDenseOp) DiffWRT(int) []bool { return []bool{!op.opts.noInputGrad, true, true} }

// SymDiff: dX[n] = Wᵀ·dY[n], dW = Σ_n dY[n]·X[n]ᵀ and db[o] = Σ_n Σ_ij
// dY[n,o,i,j], with X[n] and dY[n] read as C × p² and O × p² matrices.
func (op *edgeDenseOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	x, w := inputs[0], inputs[1]
	grads := make(gorgonia.Nodes, 3)
	var err error
	if !op.opts.noInputGrad {
		gx := &edgeDenseGradOp{base: op.derive("EdgeDenseGradX", []tensor.Shape{op.in[1], op.out}, op.in[0]), dims: op.dims, of: gradOfX}
		if grads[0], err = gorgonia.ApplyOp(gx, w, grad); err != nil {
			return nil, err
		}
	}
	gw := &edgeDenseGradOp{base: op.derive("EdgeDenseGradW", []tensor.Shape{op.in[0], op.out}, op.in[1]), dims: op.dims, of: gradOfW}
	if grads[1], err = gorgonia.ApplyOp(gw, x, grad); err != nil {
		return nil, err
	}
	gb := &edgeDenseGradOp{base: op.derive("EdgeDenseGradB", []tensor.Shape{op.out}, op.in[2]), dims: op.dims, of: gradOfB}
	if grads[2], err = gorgonia.ApplyOp(gb, grad); err != nil {
		return nil, err
	}
	return grads, nil
}

// gradOf says which gradient an edgeDenseGradOp computes.
type gradOf uint8

const (
	gradOfX gradOf = iota // inputs w, dY
	gradOfW               // inputs x, dY
	gradOfB               // input dY
)

// edgeDenseGradOp is one of the gradients of EdgeDense.
type edgeDenseGradOp struct {
	base
	dims filterDims
	of   gradOf
}

func (op *edgeDenseGradOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	return runKernel(op, &op.base, vals, edgeDenseGrad[float64], edgeDenseGrad[float32])
}

// edgeDenseGrad computes the gradient op.of. The input gradient runs
// sample by sample on the pool; the weight and bias gradients, sums over
// the samples of products of O·C·p² terms, run in sample order on the
// calling goroutine.
func edgeDenseGrad[T float](op *edgeDenseGradOp, in []*tensor.Dense, out *tensor.Dense) error {
	d := op.dims
	C, O, E := d.C, d.O, d.P*d.P
	dst := slice[T](out)
	switch op.of {
	case gradOfX:
		forEach(&op.ts, d.B, d, [2]T{}, kEdgeDenseGradX, slice[T](in[0]), slice[T](in[1]), dst)
	case gradOfW:
		x, g := slice[T](in[0]), slice[T](in[1])
		clear(dst[:O*C])
		for n := range d.B {
			serialGemm(false, true, O, C, E, 1, g[n*O*E:], E, x[n*C*E:], E, 1, dst, C)
		}
	case gradOfB:
		g := slice[T](in[0])
		db := dst[:O]
		clear(db)
		for n := range d.B {
			for o := range O {
				var s T
				for _, v := range g[(n*O+o)*E:][:E] {
					s += v
				}
				db[o] += s
			}
		}
	}
	return nil
}

// edgeDenseGradXOf sets dX[n] = Wᵀ·dY[n] for sample n: s = w, dY, dX.
func edgeDenseGradXOf[T float](l *loop[T], n int) {
	w, g, dx := l.s[0], l.s[1], l.s[2]
	C, O, E := l.d.C, l.d.O, l.d.P*l.d.P
	serialGemm(true, false, C, E, O, 1, w, C, g[n*O*E:], E, 0, dx[n*C*E:], E)
}
