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

// lossFunc is the masked training loss of a network. For scores (classes
// 0) it is the loss of LossConfig: for residuals e = prediction − score
// over the present scores,
// loss = abs·mean|e| + squared·mean e² + huber·mean h(e).
//
// For a label of K = classes ≥ 2 classes it is the weighted mean
// cross-entropy of the softmax of the outputs. The predictions are then
// B × K logits z_i and the targets B × K rows t_i = w_i·onehot(y_i), the
// weight w_i of participant i (its class weight, 1 without class weights)
// at its class y_i and 0 elsewhere, a row of NaN for a missing label, and
//
//	CE_i = logsumexp(z_i) − z_i,y_i = −log softmax(z_i)_y_i,
//	loss = Σ_i w_i·CE_i / Σ_i w_i
//
// over the present rows, 0 when Σ_i w_i = 0. This is the normalisation of
// torch.nn.functional.cross_entropy with weight and reduction "mean"
// (each term divided by the sum of the weights, not by the number of
// terms), so without class weights it is the plain mean.
type lossFunc struct {
	abs, squared, huber, delta float64
	classes                    int
}

func newLossFunc(c LossConfig) lossFunc {
	return lossFunc{abs: *c.Abs, squared: *c.Squared, huber: *c.Huber, delta: *c.Delta}
}

// crossEntropyLoss returns the loss of a label of the given number of
// classes ≥ 2: the weighted mean cross-entropy.
func crossEntropyLoss(classes int) lossFunc { return lossFunc{classes: classes} }

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

// sum returns the summed (weighted) loss terms of pred against target and
// their total weight: for scores, the number of present (non-NaN)
// targets; for a label, Σ_i w_i over the present rows. The loss is
// total/weight. pred and target have the same length, a multiple of
// f.classes for a label.
func sum[T float32 | float64](f lossFunc, pred, target []T) (total, weight float64) {
	if len(pred) != len(target) {
		panic("graphnet: loss of slices of different lengths")
	}
	if f.classes > 0 {
		return crossEntropySum(f.classes, pred, target)
	}
	for i, y := range target {
		if y != y {
			continue
		}
		total += f.term(float64(pred[i]) - float64(y))
		weight++
	}
	return total, weight
}

// crossEntropySum returns Σ_i w_i·CE_i and Σ_i w_i over the present rows
// of K columns (see lossFunc), with w_i = Σ_k t_ik.
func crossEntropySum[T float32 | float64](K int, logits, target []T) (total, weight float64) {
	if len(target)%K != 0 {
		panic("graphnet: cross-entropy of a length that is not a multiple of the classes")
	}
	for off := 0; off < len(target); off += K {
		t := target[off : off+K]
		if t[0] != t[0] {
			continue
		}
		lse := logSumExp(logits[off : off+K])
		for k, tk := range t {
			if tk != 0 {
				total += float64(tk) * (lse - float64(logits[off+k]))
				weight += float64(tk)
			}
		}
	}
	return total, weight
}

// logSumExp returns log Σ_k exp(z_k), computed as m + log Σ_k exp(z_k − m)
// with m = max_k z_k so that no exp overflows (common practice, no source).
func logSumExp[T float32 | float64](z []T) float64 {
	m := math.Inf(-1)
	for _, v := range z {
		m = math.Max(m, float64(v))
	}
	if math.IsInf(m, 0) {
		return m
	}
	var s float64
	for _, v := range z {
		s += math.Exp(float64(v) - m)
	}
	return m + math.Log(s)
}

// mean returns the loss of pred against target: the mean of the loss terms
// over the present targets, 0 if there is none.
func (f lossFunc) mean(pred, target []float64) float64 {
	total, weight := sum(f, pred, target)
	if weight == 0 {
		return 0
	}
	return total / weight
}

// lossOp is the gorgonia op of lossFunc: (pred B×T, target B×T) -> scalar,
// where NaN targets are missing. Only pred is differentiated. It writes its
// result into the same scalar at every run.
type lossOp struct {
	f   lossFunc
	out gorgonia.Value // *gorgonia.F64 or *gorgonia.F32, made at the first run
}

// maskedLoss returns the scalar loss node of pred against target.
func maskedLoss(pred, target *gorgonia.Node, f lossFunc) (*gorgonia.Node, error) {
	return gorgonia.ApplyOp(&lossOp{f: f}, pred, target)
}

func (op *lossOp) Arity() int { return 2 }
func (op *lossOp) Type() hm.Type {
	a := hm.TypeVariable('a')
	m := gorgonia.TensorType{Dims: 2, Of: a}
	return hm.NewFnType(m, m, a)
}
func (op *lossOp) InferShape(...gorgonia.DimSizer) (tensor.Shape, error) {
	return tensor.ScalarShape(), nil
}
func (op *lossOp) ReturnsPtr() bool     { return false }
func (op *lossOp) CallsExtern() bool    { return false }
func (op *lossOp) OverwritesInput() int { return -1 }

// WriteHash writes the op's address too: each op owns its output, so
// gorgonia must never merge two nodes built by two calls.
func (op *lossOp) WriteHash(h hash.Hash) {
	fmt.Fprintf(h, "maskedLoss{%v,%v,%v,%v,%d}@%p", op.f.abs, op.f.squared, op.f.huber, op.f.delta, op.f.classes, op)
}
func (op *lossOp) Hashcode() uint32 { return hashOf(op) }
func (op *lossOp) String() string   { return "maskedLoss" }

// Do returns the mean loss term over the present targets, 0 if there is
// none.
func (op *lossOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	pred, target, err := lossInputs(vals)
	if err != nil {
		return nil, err
	}
	mean := func(total, weight float64) float64 {
		if weight == 0 {
			return 0
		}
		return total / weight
	}
	switch pred.Dtype() {
	case tensor.Float64:
		out, ok := op.out.(*gorgonia.F64)
		if !ok {
			out = gorgonia.NewF64(0)
			op.out = out
		}
		*out = gorgonia.F64(mean(sum(op.f, pred.Float64s(), target.Float64s())))
	case tensor.Float32:
		out, ok := op.out.(*gorgonia.F32)
		if !ok {
			out = gorgonia.NewF32(0)
			op.out = out
		}
		*out = gorgonia.F32(mean(sum(op.f, pred.Float32s(), target.Float32s())))
	default:
		return nil, fmt.Errorf("graphnet: loss of dtype %v", pred.Dtype())
	}
	return op.out, nil
}

// lossInputs returns the predictions and targets of a loss op's inputs,
// dense tensors of one float dtype and one size.
func lossInputs(vals []gorgonia.Value) (pred, target *tensor.Dense, err error) {
	if len(vals) < 2 {
		return nil, nil, fmt.Errorf("graphnet: loss: %d inputs, want at least 2", len(vals))
	}
	pred, ok := vals[0].(*tensor.Dense)
	if !ok {
		return nil, nil, fmt.Errorf("graphnet: loss: predictions are a %T, want a *tensor.Dense", vals[0])
	}
	target, ok = vals[1].(*tensor.Dense)
	if !ok {
		return nil, nil, fmt.Errorf("graphnet: loss: targets are a %T, want a *tensor.Dense", vals[1])
	}
	if pred.Dtype() != target.Dtype() || pred.DataSize() != target.DataSize() {
		return nil, nil, fmt.Errorf("graphnet: loss: %d predictions of %v against %d targets of %v", pred.DataSize(), pred.Dtype(), target.DataSize(), target.Dtype())
	}
	return pred, target, nil
}

func (op *lossOp) DiffWRT(int) []bool { return []bool{true, false} }

func (op *lossOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	d, err := gorgonia.ApplyOp(&lossGradOp{f: op.f}, inputs[0], inputs[1], grad)
	if err != nil {
		return nil, err
	}
	return gorgonia.Nodes{d, nil}, nil
}

// lossGradOp is the derivative of lossOp with respect to pred:
// (pred, target, upstream scalar) -> B×T, upstream·slope(e)/count at present
// targets and 0 at missing ones. It writes into the same tensor at every
// run.
type lossGradOp struct {
	f   lossFunc
	out *tensor.Dense // made at the first run
}

func (op *lossGradOp) Arity() int { return 3 }
func (op *lossGradOp) Type() hm.Type {
	a := hm.TypeVariable('a')
	m := gorgonia.TensorType{Dims: 2, Of: a}
	return hm.NewFnType(m, m, a, m)
}
func (op *lossGradOp) InferShape(in ...gorgonia.DimSizer) (tensor.Shape, error) {
	return in[0].(tensor.Shape).Clone(), nil
}
func (op *lossGradOp) ReturnsPtr() bool     { return false }
func (op *lossGradOp) CallsExtern() bool    { return false }
func (op *lossGradOp) OverwritesInput() int { return -1 }

// WriteHash writes the op's address too (see lossOp.WriteHash).
func (op *lossGradOp) WriteHash(h hash.Hash) {
	fmt.Fprintf(h, "maskedLossGrad{%v,%v,%v,%v,%d}@%p", op.f.abs, op.f.squared, op.f.huber, op.f.delta, op.f.classes, op)
}
func (op *lossGradOp) Hashcode() uint32 { return hashOf(op) }
func (op *lossGradOp) String() string   { return "maskedLossGrad" }

// Do returns upstream·∂loss/∂pred, of the shape of pred.
func (op *lossGradOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	pred, target, err := lossInputs(vals)
	if err != nil {
		return nil, err
	}
	if len(vals) != 3 {
		return nil, fmt.Errorf("graphnet: loss gradient: %d inputs, want 3", len(vals))
	}
	upstream, err := scalarOf(vals[2])
	if err != nil {
		return nil, err
	}
	if op.out == nil || op.out.Dtype() != pred.Dtype() || !op.out.Shape().Eq(pred.Shape()) {
		op.out = tensor.New(tensor.Of(pred.Dtype()), tensor.WithShape(pred.Shape().Clone()...))
	}
	switch pred.Dtype() {
	case tensor.Float64:
		lossGrad(op.f, upstream, pred.Float64s(), target.Float64s(), op.out.Float64s())
	case tensor.Float32:
		lossGrad(op.f, upstream, pred.Float32s(), target.Float32s(), op.out.Float32s())
	default:
		return nil, fmt.Errorf("graphnet: loss gradient of dtype %v", pred.Dtype())
	}
	return op.out, nil
}

// lossGrad writes upstream·∂loss/∂pred into dst. For scores that is
// upstream·slope(e_i)/count at the present targets, 0 at missing ones; for
// a label (see lossFunc), row i of a present label gets
//
//	upstream·(w_i·softmax(z_i) − t_i) / Σ_j w_j
//
// and a missing row 0.
func lossGrad[T float32 | float64](f lossFunc, upstream float64, pred, target, dst []T) {
	if f.classes > 0 {
		crossEntropyGrad(f.classes, upstream, pred, target, dst)
		return
	}
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

// crossEntropyGrad writes upstream·∂loss/∂z of the weighted mean
// cross-entropy of K classes into dst (see lossGrad).
func crossEntropyGrad[T float32 | float64](K int, upstream float64, logits, target, dst []T) {
	var weight float64
	for _, t := range target {
		if t == t {
			weight += float64(t)
		}
	}
	scale := 0.0
	if weight > 0 {
		scale = upstream / weight
	}
	for off := 0; off < len(target); off += K {
		t, z, d := target[off:off+K], logits[off:off+K], dst[off:off+K]
		if t[0] != t[0] {
			clear(d)
			continue
		}
		var w float64
		for _, tk := range t {
			w += float64(tk)
		}
		lse := logSumExp(z)
		for k := range d {
			d[k] = T(scale * (w*math.Exp(float64(z[k])-lse) - float64(t[k])))
		}
	}
}

// scalarOf reads a scalar value as gorgonia makes them (*F64 or *F32).
func scalarOf(v gorgonia.Value) (float64, error) {
	switch d := v.(type) {
	case *gorgonia.F64:
		return float64(*d), nil
	case *gorgonia.F32:
		return float64(*d), nil
	}
	return 0, fmt.Errorf("graphnet: scalar value of type %T, want *gorgonia.F64 or *gorgonia.F32", v)
}

func hashOf(op gorgonia.Op) uint32 {
	h := fnv.New32a()
	op.WriteHash(h)
	return h.Sum32()
}
