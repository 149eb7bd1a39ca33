package ops

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// LeakyReLU is the leaky rectifier y = x for x ≥ 0 and y = slope·x for
// x < 0, element by element, on a tensor of any shape. The loop has no
// branch: each element is multiplied by 1 or slope picked by its sign bit
// (so -0 counts as negative and +0 as positive; the derivative at +0 is 1).
func LeakyReLU(x *gorgonia.Node, slope float64, opts ...Option) (*gorgonia.Node, error) {
	if x == nil {
		return nil, fmt.Errorf("ops: LeakyReLU: x is nil")
	}
	if math.IsNaN(slope) || math.IsInf(slope, 0) {
		return nil, fmt.Errorf("ops: LeakyReLU: slope is %v, want a finite number", slope)
	}
	o, err := collect("LeakyReLU", opts, false, false)
	if err != nil {
		return nil, err
	}
	s := x.Shape()
	op := &leakyOp{base: newBase(fmt.Sprintf("LeakyReLU(%g)", slope), []tensor.Shape{s}, s, o.pool), slope: slope}
	return gorgonia.ApplyOp(op, x)
}

// signFactor sets y[i] = x[i]·f[sign bit of x[i]] (dy nil) or
// y[i] = dy[i]·f[sign bit of x[i]], branch-free, with f = (1, slope).
func signFactor[T float](ts *tasks, x, dy, y []T, slope float64) {
	if dy == nil {
		dy = x
	}
	forRanges(ts, len(x), [2]T{1, T(slope)}, kSignFactor, x, dy, y)
}

// signFactorOf does one range of signFactor: s = x, dy, y.
func signFactorOf[T float](l *loop[T], i int) {
	lo, hi := l.span(i)
	x, dy, y := l.s[0][lo:hi], l.s[1][lo:hi], l.s[2][lo:hi]
	f := l.f
	if is64[T]() {
		for i, v := range as64(x) {
			y[i] = dy[i] * f[math.Float64bits(v)>>63]
		}
		return
	}
	for i, v := range as32(x) {
		y[i] = dy[i] * f[math.Float32bits(v)>>31]
	}
}

type leakyOp struct {
	base
	slope float64
}

func (op *leakyOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		signFactor(&op.ts, slice[float64](in[0]), nil, slice[float64](out), op.slope)
	} else {
		signFactor(&op.ts, slice[float32](in[0]), nil, slice[float32](out), op.slope)
	}
	return out, nil
}

func (op *leakyOp) DiffWRT(int) []bool { return []bool{true} }

func (op *leakyOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	g := &leakyGradOp{base: op.derive(fmt.Sprintf("LeakyReLUGrad(%g)", op.slope), []tensor.Shape{op.out, op.out}, op.out), slope: op.slope}
	dx, err := gorgonia.ApplyOp(g, inputs[0], grad)
	return gorgonia.Nodes{dx}, err
}

// leakyGradOp: inputs x, dy; dx = dy·(1 or slope by the sign of x).
type leakyGradOp struct {
	base
	slope float64
}

func (op *leakyGradOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		signFactor(&op.ts, slice[float64](in[0]), slice[float64](in[1]), slice[float64](out), op.slope)
	} else {
		signFactor(&op.ts, slice[float32](in[0]), slice[float32](in[1]), slice[float32](out), op.slope)
	}
	return out, nil
}

// Dropout is inverted dropout during training: y = x ⊙ mask, element by
// element, where mask has the shape of x and holds 0 (dropped) or
// 1/(1−rate) (kept), so that the expected value of y is x.
//
// mask is an input node the training loop creates once, next to x:
//
//	mask := gorgonia.NewTensor(g, dt, x.Dims(), gorgonia.WithShape(x.Shape()...), gorgonia.WithName("mask1"))
//	gorgonia.Let(mask, maskValue) // once; maskValue a *tensor.Dense of x's shape
//
// and refills in place before every step with FillMask(maskValue, rate,
// rng), from a seeded rng, so that the graph is never rebuilt and no step
// allocates. To predict, fill the mask with rate 0 (all ones), or build
// the prediction graph without Dropout. The gradient is dx = dy ⊙ mask;
// there is none with respect to mask.
func Dropout(x, mask *gorgonia.Node, opts ...Option) (*gorgonia.Node, error) {
	if x == nil || mask == nil {
		return nil, fmt.Errorf("ops: Dropout: nil input")
	}
	s := x.Shape()
	if !mask.Shape().Eq(s) {
		return nil, fmt.Errorf("ops: Dropout: mask %v has shape %v, want the shape of x %v", mask.Name(), mask.Shape(), s)
	}
	o, err := collect("Dropout", opts, false, false)
	if err != nil {
		return nil, err
	}
	op := &maskOp{base: newBase("Dropout", []tensor.Shape{s, s}, s, o.pool)}
	return gorgonia.ApplyOp(op, x, mask)
}

// FillMask fills mask with an inverted-dropout mask: each element is 0
// with probability rate and 1/(1−rate) otherwise, drawn from rng. rate
// must be in [0, 1); rate 0 gives all ones. mask must be a float32 or
// float64 *tensor.Dense.
func FillMask(mask tensor.Tensor, rate float64, rng *rand.Rand) error {
	if !(rate >= 0 && rate < 1) {
		return fmt.Errorf("ops: FillMask: rate %v, want 0 ≤ rate < 1", rate)
	}
	d, ok := mask.(*tensor.Dense)
	if !ok {
		return fmt.Errorf("ops: FillMask: mask is a %T, want a *tensor.Dense", mask)
	}
	keep := 1 / (1 - rate)
	switch d.Dtype() {
	case tensor.Float64:
		fillMask(d.Float64s(), rate, keep, rng)
	case tensor.Float32:
		fillMask(d.Float32s(), rate, keep, rng)
	default:
		return fmt.Errorf("ops: FillMask: mask is %v, want float64 or float32", d.Dtype())
	}
	return nil
}

func fillMask[T float](m []T, rate, keep float64, rng *rand.Rand) {
	f := [2]T{T(keep), 0}
	for i := range m {
		var dropped int
		if rng.Float64() < rate {
			dropped = 1
		}
		m[i] = f[dropped]
	}
}

// maskOp: y = x ⊙ mask, differentiable with respect to x only.
type maskOp struct{ base }

// mulInto sets y = a ⊙ b.
func mulInto[T float](ts *tasks, a, b, y []T) {
	forRanges(ts, len(a), [2]T{}, kMulInto, a, b, y)
}

// mulIntoOf does one range of mulInto: s = a, b, y.
func mulIntoOf[T float](l *loop[T], i int) {
	lo, hi := l.span(i)
	a, b, y := l.s[0][lo:hi], l.s[1][lo:hi], l.s[2][lo:hi]
	for i, v := range a {
		y[i] = v * b[i]
	}
}

func (op *maskOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		mulInto(&op.ts, slice[float64](in[0]), slice[float64](in[1]), slice[float64](out))
	} else {
		mulInto(&op.ts, slice[float32](in[0]), slice[float32](in[1]), slice[float32](out))
	}
	return out, nil
}

func (op *maskOp) DiffWRT(int) []bool { return []bool{true, false} }

func (op *maskOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	g := &maskOp{base: op.derive("DropoutGrad", op.in, op.out)}
	dx, err := gorgonia.ApplyOp(g, grad, inputs[1])
	return gorgonia.Nodes{dx, nil}, err
}
