package ops

import (
	"fmt"
	"hash"
	"hash/fnv"
	"math"
	"unsafe"

	"github.com/chewxy/hm"
	"gonum.org/v1/gonum/blas"
	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"

	"github.com/skein-neuro/skein/internal/parallel"

	// The build's BLAS (OpenBLAS with the openblas tag) for what gorgonia
	// computes itself; the ops' products are internal/gemm's (gemm.go).
	_ "github.com/skein-neuro/skein/internal/blas"
)

// float is the element type of every kernel.
type float interface{ float32 | float64 }

// Option changes how an op is built.
type Option func(*options)

type options struct {
	noInputGrad bool
	leaky       bool    // the output goes through a leaky rectifier
	slope       float64 // of the leaky rectifier
	nodeMajor   bool    // E2E output, E2N input laid out (B, p, C, p)
	unread      bool    // E2E: the output is not stored (OutputUnread)
	pool        *parallel.Pool
}

// NoInputGrad tells an op that its data input (x of E2E, E2N and
// EdgeDense, h of GraphConv, x of Dense) is participant data, not the output of another
// op, so the gradient with respect to it is never built. Asking gorgonia.Grad
// for that gradient is then an error.
func NoInputGrad() Option { return func(o *options) { o.noInputGrad = true } }

// WithLeakyReLU makes E2E apply the leaky rectifier of LeakyReLU to its
// output in the same pass: E2E(x, wr, wc, b, WithLeakyReLU(s)) equals
// LeakyReLU(E2E(x, wr, wc, b), s) and saves a pass over, and a buffer of,
// the (B, O, p, p) output forward and backward; the backward pass
// recomputes the sign of each of the rectifier's inputs from the row and
// column terms the forward pass kept (2·O·B·p values). slope must be ≥ 0.
// Only E2E accepts it.
func WithLeakyReLU(slope float64) Option {
	return func(o *options) { o.leaky, o.slope = true, slope }
}

// NodeMajor lays out the edge tensor between an E2E and an E2N node
// by node: E2E(…, NodeMajor()) returns H' of shape (B, p, O, p) with
// H'[n,i,o,j] = H[n,o,i,j], and E2N(x, …, NodeMajor()) reads x as
// (B, p, C, p) in that layout. An E2N needs row i of every channel
// together, so the pair saves a permuted copy of the (batch-sized)
// tensor forward and backward. Elementwise ops (LeakyReLU, Dropout) may
// stand between them. Only E2E and E2N accept it.
func NodeMajor() Option { return func(o *options) { o.nodeMajor = true } }

// OutputUnread tells a node-major E2E that its output is read by
// node-major E2Ns alone, which make the values they need again from the
// E2E's terms (as they do whenever their input is a node-major E2E's
// output) a block at a time: the E2E then does not store its output,
// which saves writing the batch-sized tensor, and the value of its node
// is a buffer of unspecified contents. An E2N built on the output of an
// E2E with OutputUnread that cannot make it again is an error; any
// other op reading it would read garbage. Only E2E accepts it, with
// NodeMajor.
func OutputUnread() Option { return func(o *options) { o.unread = true } }

// collect applies opts for the op called name; leakyOK says whether it
// accepts WithLeakyReLU, nodeMajorOK whether it accepts NodeMajor.
func collect(name string, opts []Option, leakyOK, nodeMajorOK bool) (options, error) {
	var o options
	for _, f := range opts {
		f(&o)
	}
	if o.nodeMajor && !nodeMajorOK {
		return o, fmt.Errorf("ops: %s does not accept NodeMajor", name)
	}
	if o.unread && (name != "E2E" || !o.nodeMajor) {
		return o, fmt.Errorf("ops: %s does not accept OutputUnread (only a node-major E2E does)", name)
	}
	if o.leaky {
		if !leakyOK {
			return o, fmt.Errorf("ops: %s does not accept WithLeakyReLU", name)
		}
		if !(o.slope >= 0) || math.IsInf(o.slope, 1) {
			return o, fmt.Errorf("ops: %s: WithLeakyReLU slope %v, want a finite slope ≥ 0", name, o.slope)
		}
	}
	return o, nil
}

// leakyFactors are the factors by which the leaky rectifier multiplies an
// input whose sign bit is 0 (index 0) or 1 (index 1).
func leakyFactors[T float](slope float64) [2]T { return [2]T{1, T(slope)} }

// ceilDiv returns ⌈a/b⌉ for a ≥ 0, b > 0.
func ceilDiv(a, b int) int { return (a + b - 1) / b }

// is64 reports whether T is float64.
func is64[T float]() bool {
	var z T
	return unsafe.Sizeof(z) == 8
}

// as64 and as32 reinterpret a []T whose T is known (by is64) to be
// float64 or float32; they copy nothing.
func as64[T float](s []T) []float64 {
	return unsafe.Slice((*float64)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
}

func as32[T float](s []T) []float32 {
	return unsafe.Slice((*float32)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
}

func trans(t bool) blas.Transpose {
	if t {
		return blas.Trans
	}
	return blas.NoTrans
}

// slice returns the backing slice of a dense tensor of element type T.
func slice[T float](t *tensor.Dense) []T {
	if is64[T]() {
		s := t.Float64s()
		return unsafe.Slice((*T)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
	}
	s := t.Float32s()
	return unsafe.Slice((*T)(unsafe.Pointer(unsafe.SliceData(s))), len(s))
}

// buffer is an op's output, allocated at the first run and reused after.
type buffer struct {
	t *tensor.Dense
}

// get returns the buffer for dtype dt and shape s, allocating it only
// when it does not exist yet or has another dtype; a buffer reshaped in
// place by a later op (gorgonia's Reshape does that) gets its shape back.
func (b *buffer) get(dt tensor.Dtype, s tensor.Shape) *tensor.Dense {
	if b.t == nil || b.t.Dtype() != dt || b.t.Shape().TotalSize() != s.TotalSize() {
		b.t = tensor.New(tensor.Of(dt), tensor.WithShape(s.Clone()...))
		return b.t
	}
	if !b.t.Shape().Eq(s) {
		if err := b.t.Reshape(s...); err != nil {
			panic("ops: " + err.Error())
		}
	}
	return b.t
}

// denseInputs checks the run-time inputs of op against the shapes fixed
// when the node was built and returns them as dense tensors of one dtype.
func denseInputs(op fmt.Stringer, shapes []tensor.Shape, in []gorgonia.Value, dst []*tensor.Dense) (tensor.Dtype, error) {
	if len(in) != len(shapes) {
		return tensor.Dtype{}, fmt.Errorf("ops: %v: got %d inputs, want %d", op, len(in), len(shapes))
	}
	var dt tensor.Dtype
	for i, v := range in {
		d, ok := v.(*tensor.Dense)
		if !ok {
			return dt, fmt.Errorf("ops: %v: input %d is a %T, want a *tensor.Dense", op, i, v)
		}
		if !d.Shape().Eq(shapes[i]) {
			return dt, fmt.Errorf("ops: %v: input %d has shape %v, want %v", op, i, d.Shape(), shapes[i])
		}
		if i == 0 {
			dt = d.Dtype()
		} else if d.Dtype() != dt {
			return dt, fmt.Errorf("ops: %v: input %d is %v, input 0 is %v", op, i, d.Dtype(), dt)
		}
		dst[i] = d
	}
	if dt != tensor.Float64 && dt != tensor.Float32 {
		return dt, fmt.Errorf("ops: %v: element type %v, want float64 or float32", op, dt)
	}
	return dt, nil
}

// nodeShapes returns the shapes of ns, checking their ranks.
func nodeShapes(name string, ns []*gorgonia.Node, ranks ...int) ([]tensor.Shape, error) {
	shapes := make([]tensor.Shape, len(ns))
	for i, n := range ns {
		if n == nil {
			return nil, fmt.Errorf("ops: %s: input %d is nil", name, i)
		}
		s := n.Shape()
		if len(s) != ranks[i] {
			return nil, fmt.Errorf("ops: %s: input %d (%v) has shape %v, want %d dimensions", name, i, n.Name(), s, ranks[i])
		}
		shapes[i] = s
	}
	return shapes, nil
}

// base holds what every op of this package shares: a name, the input and
// output shapes fixed at build time, and the output buffer.
type base struct {
	name  string
	in    []tensor.Shape
	out   tensor.Shape
	buf   buffer
	inBuf [4]*tensor.Dense
	ts    tasks
}

// newBase returns the base of an op that runs its chunks on pool.
func newBase(name string, in []tensor.Shape, out tensor.Shape, pool *parallel.Pool) base {
	return base{name: name, in: in, out: out, ts: tasks{pool: pool}}
}

// derive returns the base of an op of b's gradient: on b's pool.
func (b *base) derive(name string, in []tensor.Shape, out tensor.Shape) base {
	return newBase(name, in, out, b.ts.pool)
}

func (b *base) Arity() int { return len(b.in) }

// Type is a → a → … → a over tensors of the input and output ranks.
func (b *base) Type() hm.Type {
	a := hm.TypeVariable('a')
	ts := make([]hm.Type, 0, len(b.in)+1)
	for _, s := range b.in {
		ts = append(ts, tensorType(len(s), a))
	}
	ts = append(ts, tensorType(len(b.out), a))
	return hm.NewFnType(ts...)
}

func tensorType(dims int, a hm.Type) hm.Type {
	if dims == 0 {
		return a
	}
	return gorgonia.TensorType{Dims: dims, Of: a}
}

func (b *base) InferShape(...gorgonia.DimSizer) (tensor.Shape, error) { return b.out.Clone(), nil }
func (b *base) ReturnsPtr() bool                                      { return false }
func (b *base) CallsExtern() bool                                     { return false }
func (b *base) OverwritesInput() int                                  { return -1 }

// WriteHash writes the op's address too: each op owns its buffers, so
// gorgonia must never merge two nodes built by two calls.
func (b *base) WriteHash(h hash.Hash) { fmt.Fprintf(h, "%s@%p", b.name, b) }
func (b *base) String() string        { return b.name }

func (b *base) Hashcode() uint32 {
	h := fnv.New32a()
	b.WriteHash(h)
	return h.Sum32()
}

// runKernel checks vals against op's shapes and runs the float64 or the
// float32 instance of a kernel on them and op's output buffer, which it
// returns; a kernel's error is wrapped with op's name.
func runKernel[O fmt.Stringer](op O, b *base, vals []gorgonia.Value, k64, k32 func(O, []*tensor.Dense, *tensor.Dense) error) (gorgonia.Value, error) {
	in, out, dt, err := b.inputs(vals)
	if err != nil {
		return nil, err
	}
	k := k32
	if dt == tensor.Float64 {
		k = k64
	}
	if err := k(op, in, out); err != nil {
		return nil, fmt.Errorf("%v: %w", op, err)
	}
	return out, nil
}

// inputs checks vals and returns them with the output buffer.
func (b *base) inputs(vals []gorgonia.Value) ([]*tensor.Dense, *tensor.Dense, tensor.Dtype, error) {
	in := b.inBuf[:len(b.in)]
	dt, err := denseInputs(b, b.in, vals, in)
	if err != nil {
		return nil, nil, dt, err
	}
	return in, b.buf.get(dt, b.out), dt, nil
}
