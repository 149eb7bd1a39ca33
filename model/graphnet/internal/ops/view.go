package ops

import (
	"fmt"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// Reshape returns x read with shape s: the same values in the same
// row-major order, as numpy.reshape or torch.reshape of a contiguous
// array. s must have as many elements as x. The result is a view that
// shares x's backing array (no copy, no allocation per run), so ops must
// not write into their inputs (none of this package does). Its gradient is
// the output gradient reshaped back to the shape of x, a view too.
func Reshape(x *gorgonia.Node, s tensor.Shape) (*gorgonia.Node, error) {
	if x == nil {
		return nil, fmt.Errorf("ops: Reshape: x is nil")
	}
	shapes, err := nodeShapes("Reshape", []*gorgonia.Node{x}, x.Dims())
	if err != nil {
		return nil, err
	}
	if len(s) == 0 || s.TotalSize() != shapes[0].TotalSize() {
		return nil, fmt.Errorf("ops: Reshape: x (%v) has shape %v, %d elements; shape %v has %d", x.Name(), shapes[0], shapes[0].TotalSize(), s, s.TotalSize())
	}
	return gorgonia.ApplyOp(newViewOp("Reshape", shapes[0], s), x)
}

// viewOp reads its input with another shape.
type viewOp struct {
	base
	view *tensor.Dense // the last result, kept while the input's backing array stays
}

func newViewOp(name string, in, out tensor.Shape) *viewOp {
	return &viewOp{base: newBase(fmt.Sprintf("%s%v→%v", name, in, out), []tensor.Shape{in}, out.Clone(), nil)}
}

// Do returns the view of the input. It makes a new view only when the
// input's backing array is not the one of the last run.
func (op *viewOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in := op.inBuf[:1]
	dt, err := denseInputs(op, op.in, vals, in)
	if err != nil {
		return nil, err
	}
	x := in[0]
	if op.view == nil || op.view.Dtype() != dt || op.view.Uintptr() != x.Uintptr() || op.view.DataSize() != x.DataSize() {
		op.view = tensor.New(tensor.WithShape(op.out.Clone()...), tensor.WithBacking(x.Data()))
	}
	return op.view, nil
}

func (op *viewOp) DiffWRT(int) []bool { return []bool{true} }

// SymDiff: the gradient is the output gradient read with the input's shape.
func (op *viewOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	dx, err := gorgonia.ApplyOp(newViewOp("ReshapeGrad", op.out, op.in[0]), grad)
	return gorgonia.Nodes{dx}, err
}
