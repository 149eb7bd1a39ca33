package ops

import (
	"fmt"
	"strings"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// Concat joins matrices side by side, as numpy.concatenate or torch.cat
// along axis 1: for xs (B, F₀), (B, F₁), … the result Y is
// (B, F₀ + F₁ + …) with Y[n, F₀+…+F_{i−1} + f] = xᵢ[n, f]. Every x must
// be a matrix with the same number of rows B; there must be at least one.
// The gradient with respect to xᵢ is its block of columns of the output
// gradient.
func Concat(xs ...*gorgonia.Node) (*gorgonia.Node, error) {
	if len(xs) == 0 {
		return nil, fmt.Errorf("ops: Concat: no input")
	}
	ranks := make([]int, len(xs))
	for i := range ranks {
		ranks[i] = 2
	}
	shapes, err := nodeShapes("Concat", xs, ranks...)
	if err != nil {
		return nil, err
	}
	B := shapes[0][0]
	op := &concatOp{offsets: make([]int, len(xs)+1), ins: make([]*tensor.Dense, len(xs))}
	var names []string
	for i, s := range shapes {
		if s[0] != B {
			return nil, fmt.Errorf("ops: Concat: input %d (%v) has shape %v, want %d rows like input 0 (%v)", i, xs[i].Name(), s, B, shapes[0])
		}
		op.offsets[i+1] = op.offsets[i] + s[1]
		names = append(names, fmt.Sprint(s))
	}
	op.base = newBase(fmt.Sprintf("Concat(%s)", strings.Join(names, ", ")), shapes, tensor.Shape{B, op.offsets[len(xs)]}, nil)
	return gorgonia.ApplyOp(op, xs...)
}

// concatOp: inputs (B, Fᵢ), output (B, ΣFᵢ); input i fills the columns
// offsets[i] to offsets[i+1].
type concatOp struct {
	base
	offsets []int
	ins     []*tensor.Dense // the checked inputs of a run (base keeps room for four only)
}

func concatInto[T float](offsets []int, in []*tensor.Dense, y []T) {
	F := offsets[len(offsets)-1]
	B := len(y) / max(F, 1)
	for i, t := range in {
		x := slice[T](t)
		w := offsets[i+1] - offsets[i]
		for n := range B {
			copy(y[n*F+offsets[i]:][:w], x[n*w:][:w])
		}
	}
}

func (op *concatOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	dt, err := denseInputs(op, op.in, vals, op.ins)
	if err != nil {
		return nil, err
	}
	out := op.buf.get(dt, op.out)
	if dt == tensor.Float64 {
		concatInto(op.offsets, op.ins, slice[float64](out))
	} else {
		concatInto(op.offsets, op.ins, slice[float32](out))
	}
	return out, nil
}

func (op *concatOp) DiffWRT(n int) []bool {
	d := make([]bool, n)
	for i := range d {
		d[i] = true
	}
	return d
}

// SymDiff: dxᵢ is the block of columns of dY that xᵢ filled.
func (op *concatOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	grads := make(gorgonia.Nodes, len(inputs))
	for i := range inputs {
		cols := &columnsOp{
			base: op.derive(fmt.Sprintf("ConcatGrad%d", i), []tensor.Shape{op.out}, op.in[i]),
			from: op.offsets[i],
		}
		var err error
		if grads[i], err = gorgonia.ApplyOp(cols, grad); err != nil {
			return nil, err
		}
	}
	return grads, nil
}

// columnsOp: input (B, F), output (B, W), the columns from to from+W.
type columnsOp struct {
	base
	from int
}

func columns[T float](from int, inShape, outShape tensor.Shape, x, y []T) {
	F, W := inShape[1], outShape[1]
	for n := range inShape[0] {
		copy(y[n*W:][:W], x[n*F+from:][:W])
	}
}

func (op *columnsOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		columns(op.from, op.in[0], op.out, slice[float64](in[0]), slice[float64](out))
	} else {
		columns(op.from, op.in[0], op.out, slice[float32](in[0]), slice[float32](out))
	}
	return out, nil
}

// Product is the element-wise (Hadamard) product y = a ⊙ b of two tensors
// of the same shape, as numpy.multiply or torch.mul without broadcasting.
// Its gradients are da = dy ⊙ b and db = dy ⊙ a.
func Product(a, b *gorgonia.Node) (*gorgonia.Node, error) {
	if a == nil || b == nil {
		return nil, fmt.Errorf("ops: Product: nil input")
	}
	s := a.Shape()
	if !b.Shape().Eq(s) {
		return nil, fmt.Errorf("ops: Product: b (%v) has shape %v, want the shape of a (%v) %v", b.Name(), b.Shape(), a.Name(), s)
	}
	return gorgonia.ApplyOp(newProductOp("Product", s), a, b)
}

// productOp: y = a ⊙ b, the forward pass of Dropout's maskOp but
// differentiable with respect to both inputs.
type productOp struct{ maskOp }

func newProductOp(name string, s tensor.Shape) *productOp {
	return &productOp{maskOp{base: newBase(fmt.Sprintf("%s%v", name, s), []tensor.Shape{s, s}, s, nil)}}
}

func (op *productOp) DiffWRT(int) []bool { return []bool{true, true} }

// SymDiff: da = dy ⊙ b, db = dy ⊙ a.
func (op *productOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	da, err := gorgonia.ApplyOp(newProductOp("ProductGradA", op.out), grad, inputs[1])
	if err != nil {
		return nil, err
	}
	db, err := gorgonia.ApplyOp(newProductOp("ProductGradB", op.out), grad, inputs[0])
	if err != nil {
		return nil, err
	}
	return gorgonia.Nodes{da, db}, nil
}
