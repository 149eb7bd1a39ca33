package graphnet

import (
	"fmt"
	"hash"
	"hash/fnv"
	"math"

	"github.com/chewxy/hm"
	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// lossFunc is the masked training loss of LossConfig: for residuals
// e = prediction − score over the present scores,
// loss = abs·mean|e| + squared·mean e² + huber·mean h(e).
type lossFunc struct {
	abs, squared, huber, delta float64
}

func newLossFunc(c LossConfig) lossFunc {
	return lossFunc{abs: *c.Abs, squared: *c.Squared, huber: *c.Huber, delta: *c.Delta}
}

// term returns the loss of one residual e, before averaging.
func (f lossFunc) term(e float64) float64 {
	a := math.Abs(e)
	h := 0.5 * e * e
	if a > f.delta {
		h = f.delta * (a - 0.5*f.delta)
	}
	return f.abs*a + f.squared*e*e + f.huber*h
}

// slope returns the derivative of term at e. The derivative of |e| at 0 is
// taken as 0.
func (f lossFunc) slope(e float64) float64 {
	sign := 0.0
	switch {
	case e > 0:
		sign = 1
	case e < 0:
		sign = -1
	}
	clipped := math.Max(-f.delta, math.Min(f.delta, e))
	return f.abs*sign + 2*f.squared*e + f.huber*clipped
}

// sum returns the summed loss terms of pred against target and the number of
// present (non-NaN) targets. pred and target have the same length.
func sum[T float32 | float64](f lossFunc, pred, target []T) (total float64, count int) {
	if len(pred) != len(target) {
		panic("graphnet: loss of slices of different lengths")
	}
	for i, y := range target {
		if y != y {
			continue
		}
		total += f.term(float64(pred[i]) - float64(y))
		count++
	}
	return total, count
}

// mean returns the loss of pred against target: the mean of the loss terms
// over the present targets, 0 if there is none.
func (f lossFunc) mean(pred, target []float64) float64 {
	total, count := sum(f, pred, target)
	if count == 0 {
		return 0
	}
	return total / float64(count)
}

// lossOp is the gorgonia op of lossFunc: (pred B×T, target B×T) -> scalar,
// where NaN targets are missing. Only pred is differentiated.
type lossOp struct {
	f lossFunc
}

// maskedLoss returns the scalar loss node of pred against target.
func maskedLoss(pred, target *gorgonia.Node, f lossFunc) (*gorgonia.Node, error) {
	return gorgonia.ApplyOp(lossOp{f}, pred, target)
}

func (op lossOp) Arity() int { return 2 }
func (op lossOp) Type() hm.Type {
	a := hm.TypeVariable('a')
	m := gorgonia.TensorType{Dims: 2, Of: a}
	return hm.NewFnType(m, m, a)
}
func (op lossOp) InferShape(...gorgonia.DimSizer) (tensor.Shape, error) {
	return tensor.ScalarShape(), nil
}
func (op lossOp) ReturnsPtr() bool     { return false }
func (op lossOp) CallsExtern() bool    { return false }
func (op lossOp) OverwritesInput() int { return -1 }
func (op lossOp) WriteHash(h hash.Hash) {
	fmt.Fprintf(h, "maskedLoss{%v,%v,%v,%v}", op.f.abs, op.f.squared, op.f.huber, op.f.delta)
}
func (op lossOp) Hashcode() uint32 { return hashOf(op) }
func (op lossOp) String() string   { return "maskedLoss" }

func (op lossOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	switch vals[0].Dtype() {
	case tensor.Float64:
		return op.UsePreallocDo(gorgonia.NewF64(0), vals...)
	case tensor.Float32:
		return op.UsePreallocDo(gorgonia.NewF32(0), vals...)
	}
	return nil, fmt.Errorf("graphnet: loss of dtype %v", vals[0].Dtype())
}

func (op lossOp) UsePreallocDo(prealloc gorgonia.Value, vals ...gorgonia.Value) (gorgonia.Value, error) {
	var total float64
	var count int
	switch pred := vals[0].Data().(type) {
	case []float64:
		total, count = sum(op.f, pred, vals[1].Data().([]float64))
	case []float32:
		total, count = sum(op.f, pred, vals[1].Data().([]float32))
	default:
		return nil, fmt.Errorf("graphnet: loss of %T", pred)
	}
	loss := 0.0
	if count > 0 {
		loss = total / float64(count)
	}
	return setScalar(prealloc, loss)
}

func (op lossOp) DiffWRT(int) []bool { return []bool{true, false} }

func (op lossOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	d, err := gorgonia.ApplyOp(lossGradOp(op), inputs[0], inputs[1], grad)
	if err != nil {
		return nil, err
	}
	return gorgonia.Nodes{d, nil}, nil
}

// lossGradOp is the derivative of lossOp with respect to pred:
// (pred, target, upstream scalar) -> B×T, upstream·slope(e)/count at present
// targets and 0 at missing ones.
type lossGradOp lossOp

func (op lossGradOp) Arity() int { return 3 }
func (op lossGradOp) Type() hm.Type {
	a := hm.TypeVariable('a')
	m := gorgonia.TensorType{Dims: 2, Of: a}
	return hm.NewFnType(m, m, a, m)
}
func (op lossGradOp) InferShape(in ...gorgonia.DimSizer) (tensor.Shape, error) {
	return in[0].(tensor.Shape).Clone(), nil
}
func (op lossGradOp) ReturnsPtr() bool     { return false }
func (op lossGradOp) CallsExtern() bool    { return false }
func (op lossGradOp) OverwritesInput() int { return -1 }
func (op lossGradOp) WriteHash(h hash.Hash) {
	fmt.Fprintf(h, "maskedLossGrad{%v,%v,%v,%v}", op.f.abs, op.f.squared, op.f.huber, op.f.delta)
}
func (op lossGradOp) Hashcode() uint32 { return hashOf(op) }
func (op lossGradOp) String() string   { return "maskedLossGrad" }

func (op lossGradOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	out := tensor.New(tensor.Of(vals[0].Dtype()), tensor.WithShape(vals[0].Shape().Clone()...))
	return op.UsePreallocDo(out, vals...)
}

func (op lossGradOp) UsePreallocDo(prealloc gorgonia.Value, vals ...gorgonia.Value) (gorgonia.Value, error) {
	upstream, err := scalarOf(vals[2])
	if err != nil {
		return nil, err
	}
	switch pred := vals[0].Data().(type) {
	case []float64:
		lossGrad(op.f, upstream, pred, vals[1].Data().([]float64), prealloc.Data().([]float64))
	case []float32:
		lossGrad(op.f, upstream, pred, vals[1].Data().([]float32), prealloc.Data().([]float32))
	default:
		return nil, fmt.Errorf("graphnet: loss gradient of %T", pred)
	}
	return prealloc, nil
}

// lossGrad writes upstream·∂loss/∂pred into dst.
func lossGrad[T float32 | float64](f lossFunc, upstream float64, pred, target, dst []T) {
	count := 0
	for _, y := range target {
		if y == y {
			count++
		}
	}
	scale := 0.0
	if count > 0 {
		scale = upstream / float64(count)
	}
	for i, y := range target {
		if y != y {
			dst[i] = 0
			continue
		}
		dst[i] = T(scale * f.slope(float64(pred[i])-float64(y)))
	}
}

// setScalar stores v in a scalar value, as gorgonia allocates them (*F64,
// *F32 or a 0-dimensional tensor).
func setScalar(dst gorgonia.Value, v float64) (gorgonia.Value, error) {
	switch d := dst.(type) {
	case *gorgonia.F64:
		*d = gorgonia.F64(v)
	case *gorgonia.F32:
		*d = gorgonia.F32(v)
	case *tensor.Dense:
		switch s := d.Data().(type) {
		case []float64:
			s[0] = v
		case []float32:
			s[0] = float32(v)
		case float64:
			d.Set(0, v)
		case float32:
			d.Set(0, float32(v))
		}
	default:
		return nil, fmt.Errorf("graphnet: scalar value of type %T", dst)
	}
	return dst, nil
}

// scalarOf reads a scalar value.
func scalarOf(v gorgonia.Value) (float64, error) {
	switch d := v.(type) {
	case *gorgonia.F64:
		return float64(*d), nil
	case *gorgonia.F32:
		return float64(*d), nil
	}
	switch s := v.Data().(type) {
	case float64:
		return s, nil
	case float32:
		return float64(s), nil
	case []float64:
		return s[0], nil
	case []float32:
		return float64(s[0]), nil
	}
	return 0, fmt.Errorf("graphnet: scalar value of type %T", v)
}

func hashOf(op gorgonia.Op) uint32 {
	h := fnv.New32a()
	op.WriteHash(h)
	return h.Sum32()
}
