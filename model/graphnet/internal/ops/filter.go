package ops

import (
	"fmt"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"

	"github.com/skein-neuro/skein/internal/vec"
)

// E2E is the edge-to-edge cross-shaped filter of Kawahara et al. (2017):
//
//	H[n,o,i,j] = Σ_c Σ_k (Wr[o,c,k]·X[n,c,i,k] + Wc[o,c,k]·X[n,c,k,j]) + b[o]
//
// x is (B, C, p, p) (B samples, C input channels of p×p edge values), wr
// and wc are (O, C, p), b is (O); the result is (B, O, p, p). Each output
// edge (i, j) sees row i and column j of every input channel. The inputs
// need not be symmetric. It is differentiable with respect to all four
// inputs (x only without NoInputGrad). With WithLeakyReLU(slope) the
// result is put through the leaky rectifier in the same pass.
func E2E(x, wr, wc, b *gorgonia.Node, opts ...Option) (*gorgonia.Node, error) {
	shapes, err := nodeShapes("E2E", []*gorgonia.Node{x, wr, wc, b}, 4, 3, 3, 1)
	if err != nil {
		return nil, err
	}
	xs := shapes[0]
	B, C, P, O := xs[0], xs[1], xs[2], shapes[1][0]
	if xs[3] != P {
		return nil, fmt.Errorf("ops: E2E: x has shape %v, want (B, C, p, p)", xs)
	}
	o, err := collect("E2E", opts, true, true)
	if err != nil {
		return nil, err
	}
	for i, name := range []string{"wr", "wc"} {
		if s := shapes[1+i]; s[0] != O || s[1] != C || s[2] != P {
			return nil, fmt.Errorf("ops: E2E: %s has shape %v, want (%d, %d, %d) (O, C, p) to match x %v and wr %v", name, s, O, C, P, xs, shapes[1])
		}
	}
	if shapes[3][0] != O {
		return nil, fmt.Errorf("ops: E2E: b has shape %v, want (%d)", shapes[3], O)
	}
	out := tensor.Shape{B, O, P, P}
	if o.nodeMajor {
		out = tensor.Shape{B, P, O, P}
	}
	op := &e2eOp{
		base:    newBase(fmt.Sprintf("E2E(%v→%v)", xs, out), shapes, out, o.pool),
		dims:    filterDims{B: B, C: C, O: O, P: P, outNodeMajor: o.nodeMajor},
		opts:    o,
		terms:   new(buffer),
		rcShape: tensor.Shape{2, O, B, P},
	}
	op.rows = newRowCache(op.dims)
	return gorgonia.ApplyOp(op, x, wr, wc, b)
}

// E2N is the edge-to-node filter of Kawahara et al. (2017):
//
//	N[n,o,i] = Σ_c Σ_k W[o,c,k]·X[n,c,i,k] + b[o]
//
// x is (B, C, p, p), w is (O, C, p), b is (O); the result is (B, O, p):
// one value per node i and output channel o, from row i of every input
// channel. It is differentiable with respect to all three inputs (x only
// without NoInputGrad).
func E2N(x, w, b *gorgonia.Node, opts ...Option) (*gorgonia.Node, error) {
	shapes, err := nodeShapes("E2N", []*gorgonia.Node{x, w, b}, 4, 3, 1)
	if err != nil {
		return nil, err
	}
	o, err := collect("E2N", opts, false, true)
	if err != nil {
		return nil, err
	}
	xs := shapes[0]
	B, C, P, O := xs[0], xs[1], xs[2], shapes[1][0]
	if o.nodeMajor {
		C, P = xs[2], xs[1]
	}
	if xs[3] != P || (o.nodeMajor && xs[1] != P) || (!o.nodeMajor && xs[2] != P) {
		want := "(B, C, p, p)"
		if o.nodeMajor {
			want = "(B, p, C, p) (NodeMajor)"
		}
		return nil, fmt.Errorf("ops: E2N: x has shape %v, want %s", xs, want)
	}
	if s := shapes[1]; s[1] != C || s[2] != P {
		return nil, fmt.Errorf("ops: E2N: w has shape %v, want (O, %d, %d) (O, C, p) to match x %v", s, C, P, xs)
	}
	if shapes[2][0] != O {
		return nil, fmt.Errorf("ops: E2N: b has shape %v, want (%d)", shapes[2], O)
	}
	op := &e2nOp{
		base:      newBase(fmt.Sprintf("E2N(%v→%d)", xs, O), shapes, tensor.Shape{B, O, P}, o.pool),
		dims:      filterDims{B: B, C: C, O: O, P: P, inNodeMajor: o.nodeMajor},
		opts:      o,
		termShape: tensor.Shape{O, B, P},
	}
	op.rows = newRowCache(op.dims)
	op.from = e2eSource(x, op.dims)
	if e, ok := x.Op().(*e2eOp); ok && e.opts.unread && op.from == nil {
		return nil, fmt.Errorf("ops: E2N: x is the output of an E2E with OutputUnread, which only a node-major E2N of its shape may read")
	}
	if op.from != nil {
		_, tn := tileSizes(O, B*P)
		op.scratchShape = tensor.Shape{ceilDiv(B*P, tn), regenBlock, tn}
	}
	return gorgonia.ApplyOp(op, x, w, b)
}

// e2eSource returns what the node-major E2N input x of dims d is made
// from when x is the output of a node-major E2E (and not of an op
// between them), nil otherwise.
func e2eSource(x *gorgonia.Node, d filterDims) *e2eOutput {
	e, ok := x.Op().(*e2eOp)
	if !ok || !d.inNodeMajor || !e.dims.outNodeMajor || e.dims.O != d.C || e.dims.P != d.P || e.dims.B != d.B {
		return nil
	}
	from := &e2eOutput{terms: e.terms, f: [2]float64{1, 1}}
	if e.opts.leaky {
		from.f = [2]float64{1, e.opts.slope}
	}
	return from
}

// filterDims are the sizes of a filter (B samples, C input channels,
// O output channels, p nodes) and the layouts of its edge tensors:
// (B, C, p, p), or node-major (B, p, C, p) for an E2E output or an E2N
// input (see NodeMajor).
type filterDims struct {
	B, C, O, P   int
	outNodeMajor bool // E2E: the output is (B, p, O, p)
	inNodeMajor  bool // E2N: the input is (B, p, C, p), Xrow itself
}

// outRow returns the offset of row i of output channel o of sample n in
// the output of an E2E.
func (d filterDims) outRow(n, o, i int) int {
	if d.outNodeMajor {
		return ((n*d.P+i)*d.O + o) * d.P
	}
	return ((n*d.O+o)*d.P + i) * d.P
}

// outRowStride returns the distance between rows i and i+1 of one channel
// of an E2E output.
func (d filterDims) outRowStride() int {
	if d.outNodeMajor {
		return d.O * d.P
	}
	return d.P
}

// rowsAreInput reports whether Xrow is x itself: one input channel, or a
// node-major input.
func (d filterDims) rowsAreInput() bool { return d.C == 1 || d.inNodeMajor }

// Terms. A row or column term (R[n,o,i] = Σ_{c,k} Wr[o,c,k]·X[n,c,i,k],
// Cc[n,o,j] = Σ_{c,k} Wc[o,c,k]·X[n,c,k,j]) and its gradient are kept as
// (O, B, p) matrices, O × (B·p), so that all samples are one product:
//
//	R  = Wr · Xrowᵀ, with Wr (O × C·p) and Xrow (B·p × C·p), Xrow[(n,i),(c,k)] = X[n,c,i,k]
//	Cc_n = Wc · X_n, with X_n (C·p × p) sample n of x as it is stored
//
// Xrow is a permuted copy of x (x itself when C = 1).

// termSize is the number of values of one term, O·B·p.
func (d filterDims) termSize() int { return d.O * d.B * d.P }

// rowCache holds Xrow, the (B, p, C, p) permutation of x.
type rowCache struct {
	buf   buffer
	shape tensor.Shape
}

func newRowCache(d filterDims) *rowCache { return &rowCache{shape: tensor.Shape{d.B, d.P, d.C, d.P}} }

func dtypeOf[T float]() tensor.Dtype {
	if is64[T]() {
		return tensor.Float64
	}
	return tensor.Float32
}

// fillRows sets Xrow[n,i,c,k] = X[n,c,i,k] and returns it; x itself when C = 1.
func fillRows[T float](ts *tasks, d filterDims, rc *rowCache, x []T) []T {
	if d.rowsAreInput() {
		return x
	}
	xr := slice[T](rc.buf.get(dtypeOf[T](), rc.shape))
	forEach(ts, d.B, d, [2]T{}, kFillRows, x, xr)
	return xr
}

// fillRowsOf permutes sample n: s = x, xr.
func fillRowsOf[T float](l *loop[T], n int) {
	x, xr := l.s[0], l.s[1]
	C, P := l.d.C, l.d.P
	for c := 0; c < C; c++ {
		for i := 0; i < P; i++ {
			copy(xr[((n*P+i)*C+c)*P:][:P], x[((n*C+c)*P+i)*P:][:P])
		}
	}
}

// rows returns Xrow as the forward pass filled it (x itself when C = 1).
func rows[T float](d filterDims, rc *rowCache, x []T) ([]T, error) {
	if d.rowsAreInput() {
		return x, nil
	}
	if rc.buf.t == nil || rc.buf.t.Dtype() != dtypeOf[T]() {
		return nil, fmt.Errorf("ops: backward pass run before its forward pass")
	}
	return slice[T](rc.buf.t), nil
}

// unpermute sets (or, with add, adds to) dx[n,c,i,k] the value dxr[n,i,c,k].
func unpermute[T float](ts *tasks, d filterDims, dxr, dx []T, add bool) {
	if add {
		forEach(ts, d.B, d, [2]T{}, kUnpermute, dxr, dx, nil)
	} else {
		forEach(ts, d.B, d, [2]T{}, kUnpermute, dxr, nil, dx)
	}
}

// unpermuteOf does sample n: s = dxr, dx to add to, dx to set.
func unpermuteOf[T float](l *loop[T], n int) {
	dxr, dx := l.s[0], l.s[1]
	add := dx != nil
	if !add {
		dx = l.s[2]
	}
	C, P := l.d.C, l.d.P
	for c := 0; c < C; c++ {
		for i := 0; i < P; i++ {
			src := dxr[((n*P+i)*C+c)*P:][:P]
			dst := dx[((n*C+c)*P+i)*P:][:P]
			if add {
				for k, v := range src {
					dst[k] += v
				}
			} else {
				copy(dst, src)
			}
		}
	}
}

func betaFor[T float](first bool) T {
	if first {
		return 0
	}
	return 1
}

// rowTerm sets the (O, B, p) term out = W·Xrowᵀ.
func rowTerm[T float](ts *tasks, d filterDims, xr, w, out []T) {
	B, C, O, P := d.B, d.C, d.O, d.P
	parallelGemm(ts, false, true, O, B*P, C*P, 1, w, C*P, xr, C*P, 0, out, B*P)
}

// colTerm sets the (O, B, p) term out, out_n = W·X_n.
func colTerm[T float](ts *tasks, d filterDims, x, w, out []T) {
	forEach(ts, d.B, d, [2]T{}, kColTerm, x, w, out)
}

// colTermOf does sample n: s = x, w, out.
func colTermOf[T float](l *loop[T], n int) {
	x, w, out := l.s[0], l.s[1], l.s[2]
	B, C, O, P := l.d.B, l.d.C, l.d.O, l.d.P
	serialGemm(false, false, O, P, C*P, 1, w, C*P, x[n*C*P*P:], P, 0, out[n*P:], B*P)
}

// rowGradW sets dW = G·Xrow, the gradient of Σ G ⊙ R with respect to W.
func rowGradW[T float](ts *tasks, d filterDims, g, xr, dw []T) {
	B, C, O, P := d.B, d.C, d.O, d.P
	parallelGemm(ts, false, false, O, C*P, B*P, 1, g, B*P, xr, C*P, 0, dw, C*P)
}

// colGradW sets dW = Σ_n G_n·X_nᵀ, one chunk per tileShort columns of dW
// (the sum over samples runs in order within each).
func colGradW[T float](ts *tasks, d filterDims, g, x, dw []T) {
	forEach(ts, ceilDiv(d.C*d.P, tileShort), d, [2]T{}, kColGradW, g, x, dw)
}

// colGradWOf does columns tileShort·t… of dW: s = g, x, dw.
func colGradWOf[T float](l *loop[T], t int) {
	g, x, dw := l.s[0], l.s[1], l.s[2]
	B, C, O, P := l.d.B, l.d.C, l.d.O, l.d.P
	j0 := t * tileShort
	cols := min(tileShort, C*P-j0)
	for n := 0; n < B; n++ {
		serialGemm(false, true, O, cols, P, 1, g[n*P:], B*P, x[n*C*P*P+j0*P:], P, betaFor[T](n == 0), dw[j0:], C*P)
	}
}

// rowGradX sets (or adds to) dXrow the value Gᵀ·W, from gt = Gᵀ as a
// (B, p, O) tensor, so that the product has no transposed operand (gonum's
// pure-Go Gemm is slowest with a transposed first operand).
func rowGradX[T float](ts *tasks, d filterDims, gt, w, dxr []T, add bool) {
	B, C, O, P := d.B, d.C, d.O, d.P
	parallelGemm(ts, false, false, B*P, C*P, O, 1, gt, O, w, C*P, betaFor[T](!add), dxr, C*P)
}

// colGradX sets dX_n = Wᵀ·G_n, from wt = Wᵀ (C·p × O).
func colGradX[T float](ts *tasks, d filterDims, g, wt, dx []T) {
	forEach(ts, d.B, d, [2]T{}, kColGradX, g, wt, dx)
}

// colGradXOf does sample n: s = g, wt, dx.
func colGradXOf[T float](l *loop[T], n int) {
	g, wt, dx := l.s[0], l.s[1], l.s[2]
	B, C, O, P := l.d.B, l.d.C, l.d.O, l.d.P
	serialGemm(false, false, C*P, P, O, 1, wt, O, g[n*P:], B*P, 0, dx[n*C*P*P:], P)
}

// transposeInto sets dst (cols × rows) to the transpose of src (rows × cols).
func transposeInto[T float](src []T, rows, cols int, dst []T) {
	for r := 0; r < rows; r++ {
		for c, v := range src[r*cols:][:cols] {
			dst[c*rows+r] = v
		}
	}
}

// biasGrad sets db[o] = Σ_{n,i} G[o,n,i].
func biasGrad[T float](d filterDims, g, db []T) {
	BP := d.B * d.P
	for o := range db[:d.O] {
		var s T
		for _, v := range g[o*BP:][:BP] {
			s += v
		}
		db[o] = s
	}
}

// e2eForward computes the row and column terms into rc (2, O, B, p), adds
// the bias to the row terms, R'[o,n,i] = R[o,n,i] + b[o], and then, in one
// loop, H[n,o,i,j] = R'[o,n,i] + Cc[o,n,j], put through the leaky
// rectifier if opt.leaky. The backward pass of the rectifier recomputes
// the signs of its input from rc.
func e2eForward[T float](ts *tasks, d filterDims, opt options, cache *rowCache, x, wr, wc, b, rc, h []T) {
	rowTerm(ts, d, fillRows(ts, d, cache, x), wr, rc)
	colTerm(ts, d, x, wc, rc[d.termSize():])
	BP := d.B * d.P
	for o, bo := range b[:d.O] {
		for i := range rc[o*BP:][:BP] {
			rc[o*BP+i] += bo
		}
	}
	f := [2]T{1, 1} // no rectifier: v·1 is v, bit for bit
	if opt.leaky {
		f = leakyFactors[T](opt.slope)
	}
	if !opt.unread {
		forEach(ts, d.B, d, f, kE2ESum, rc, h)
	}
}

// preActivations returns the terms (2, O, B, p) of an E2E's forward pass
// (row terms with the bias, then column terms) from which the backward
// pass of its fused rectifier recomputes the rectifier's input
// R'[o,n,i] + Cc[o,n,j]: the same sum, so the same sign, as the forward
// pass saw. It returns nil for nil terms (no fused rectifier).
func preActivations[T float](terms *buffer, d filterDims) ([]T, error) {
	if terms == nil {
		return nil, nil
	}
	if terms.t == nil || terms.t.Dtype() != dtypeOf[T]() || terms.t.Shape().TotalSize() != 2*d.termSize() {
		return nil, fmt.Errorf("ops: backward pass run before its forward pass")
	}
	return slice[T](terms.t), nil
}

// e2eSumOf does sample n of the fused loop of e2eForward: s = rc, h. It
// walks the rows of h in memory order (channel by channel, or node by
// node when node-major).
func e2eSumOf[T float](l *loop[T], n int) {
	rc, h := l.s[0], l.s[1]
	d := l.d
	forRows(d, func(o, i int) {
		at := d.outRow(n, o, i)
		vec.LeakyRow(h[at:][:d.P], rc[d.termSize()+(o*d.B+n)*d.P:][:d.P], rc[(o*d.B+n)*d.P+i], l.f)
	})
}

// forRows calls row(o, i) for every row of an E2E output sample in the
// order the rows are stored.
func forRows(d filterDims, row func(o, i int)) {
	if d.outNodeMajor {
		for i := 0; i < d.P; i++ {
			for o := 0; o < d.O; o++ {
				row(o, i)
			}
		}
		return
	}
	for o := 0; o < d.O; o++ {
		for i := 0; i < d.P; i++ {
			row(o, i)
		}
	}
}

// channelSums sets the row sums and the column sums (the rows added in
// order) of channel o of sample n of an E2E output gradient, whose row i
// is g[i·ld:][:p], in s (3, O, B, p) as edgeSums lays them out. With pre (the forward pass's terms, see preActivations)
// the gradient is first multiplied by the fused rectifier's derivative,
// f[s] with s the sign bit of its input.
func channelSums[T float](d filterDims, n, o int, g []T, ld int, s, pre []T, f [2]T) {
	at := (o*d.B + n) * d.P
	cc, sums := s[d.termSize()+at:][:d.P], s[at:][:d.P]
	clear(cc)
	if pre == nil {
		for i := range sums {
			sums[i] = sumAndAccumulate(g[i*ld:][:d.P], cc)
		}
		return
	}
	vec.LeakySumsAcc(g, ld, pre[d.termSize()+at:][:d.P], pre[at:][:d.P], f, cc, sums)
}

// edgeSums sets s (3, O, B, p) to the row sums dR[o,n,i] = Σ_j G[n,o,i,j],
// the column sums dC[o,n,j] = Σ_i G[n,o,i,j] of g (B, O, p, p), and the
// row sums again laid out as (B, p, O), dRt[n,i,o] = dR[o,n,i]. With pre
// (the terms of the forward pass of an E2E with WithLeakyReLU, see
// preActivations), G is g times the derivative of the rectifier.
func edgeSums[T float](ts *tasks, d filterDims, g, pre []T, slope float64, s []T) {
	forEach(ts, d.B, d, leakyFactors[T](slope), kEdgeSums, g, s, pre)
}

// edgeSumsOf does sample n of edgeSums: s = g, sums, pre (nil without a
// fused rectifier).
func edgeSumsOf[T float](l *loop[T], n int) {
	g, s, pre := l.s[0], l.s[1], l.s[2]
	d := l.d
	for o := 0; o < d.O; o++ {
		channelSums(d, n, o, g[d.outRow(n, o, 0):], d.outRowStride(), s, pre, l.f)
	}
	transposeRowSums(d, s, n)
}

// transposeRowSums sets the row sums of sample n again, laid out as
// (B, p, O) after the row and column sums in s (see edgeSums).
func transposeRowSums[T float](d filterDims, s []T, n int) {
	B, O, P := d.B, d.O, d.P
	rt := s[2*d.termSize()+n*P*O:][:P*O]
	for o := 0; o < O; o++ {
		for i, v := range s[(o*B+n)*P:][:P] {
			rt[i*O+o] = v
		}
	}
}

// sumAndAccumulate returns Σ row and adds row to acc (len(acc) ≥ len(row)),
// with four partial sums so that the additions do not wait on each other.
func sumAndAccumulate[T float](row, acc []T) T {
	acc = acc[:len(row)]
	var s0, s1, s2, s3 T
	j := 0
	for ; j+4 <= len(row); j += 4 {
		v := row[j : j+4 : j+4]
		a := acc[j : j+4 : j+4]
		s0 += v[0]
		s1 += v[1]
		s2 += v[2]
		s3 += v[3]
		a[0] += v[0]
		a[1] += v[1]
		a[2] += v[2]
		a[3] += v[3]
	}
	for ; j < len(row); j++ {
		s0 += row[j]
		acc[j] += row[j]
	}
	return (s0 + s1) + (s2 + s3)
}

type e2eOp struct {
	base
	dims    filterDims
	opts    options
	terms   *buffer // row terms with the bias and column terms, (2, O, B, p); read by the backward sums of a fused rectifier
	rcShape tensor.Shape
	rows    *rowCache // shared with the backward op of Wr
}

func (op *e2eOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	d := op.dims
	rc := op.terms.get(dt, op.rcShape)
	if dt == tensor.Float64 {
		e2eForward(&op.ts, d, op.opts, op.rows, slice[float64](in[0]), slice[float64](in[1]), slice[float64](in[2]), slice[float64](in[3]), slice[float64](rc), slice[float64](out))
	} else {
		e2eForward(&op.ts, d, op.opts, op.rows, slice[float32](in[0]), slice[float32](in[1]), slice[float32](in[2]), slice[float32](in[3]), slice[float32](rc), slice[float32](out))
	}
	return out, nil
}

func (op *e2eOp) DiffWRT(int) []bool { return []bool{!op.opts.noInputGrad, true, true, true} }

// SymDiff: with the row sums dR and column sums dC of dH (edgeSums),
// dWr = dR·Xrow, dWc = Σ_n dC_n·X_nᵀ, db[o] = Σ dR[o,·], and
// dX = unpermute(dRᵀ·Wr) + Wcᵀ·dC_n per sample.
func (op *e2eOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	d := op.dims
	x, wr, wc := inputs[0], inputs[1], inputs[2]
	sumsShape := tensor.Shape{3, d.O, d.B, d.P}
	sums, err := op.fusedSums(grad, sumsShape)
	switch {
	case err != nil:
	case sums != nil: // the gradient of a node-major E2N after this one, summed as it is made
	default:
		name := "E2ESums"
		if op.opts.leaky {
			name = fmt.Sprintf("E2ESums(LeakyReLU %g)", op.opts.slope)
		}
		es := &edgeSumsOp{base: op.derive(name, []tensor.Shape{op.out}, sumsShape), dims: d, slope: op.opts.slope, pre: op.preTerms()}
		sums, err = gorgonia.ApplyOp(es, grad)
	}
	if err != nil {
		return nil, err
	}
	grads := make(gorgonia.Nodes, 4)
	if !op.opts.noInputGrad {
		gx := newGradXOp(&op.base, "E2EGradX", d, []tensor.Shape{sumsShape, op.in[1], op.in[2]}, op.in[0], 2*d.termSize())
		if grads[0], err = gorgonia.ApplyOp(gx, sums, wr, wc); err != nil {
			return nil, err
		}
	}
	gwr := &gradWOp{base: op.derive("E2EGradWr", []tensor.Shape{sumsShape, op.in[0]}, op.in[1]), dims: d, rows: op.rows}
	if grads[1], err = gorgonia.ApplyOp(gwr, sums, x); err != nil {
		return nil, err
	}
	gwc := &gradWOp{base: op.derive("E2EGradWc", []tensor.Shape{sumsShape, op.in[0]}, op.in[2]), dims: d, off: d.termSize(), col: true}
	if grads[2], err = gorgonia.ApplyOp(gwc, sums, x); err != nil {
		return nil, err
	}
	gb := &biasGradOp{base: op.derive("E2EGradB", []tensor.Shape{sumsShape}, op.in[3]), dims: d}
	if grads[3], err = gorgonia.ApplyOp(gb, sums); err != nil {
		return nil, err
	}
	return grads, nil
}

// preTerms returns the buffer of terms the backward pass of the fused
// rectifier reads, nil without a rectifier.
func (op *e2eOp) preTerms() *buffer {
	if !op.opts.leaky {
		return nil
	}
	return op.terms
}

// e2nGradXName names the input-gradient op of an E2N (see fusedSums).
const e2nGradXName = "E2NGradX"

type e2nOp struct {
	base
	dims      filterDims
	opts      options
	rows      *rowCache // shared with the backward op of W
	term      buffer    // the row term, (O, B, p)
	termShape tensor.Shape
	// from makes x again (regenRowTerm), when x is a node-major E2E's
	// output; scratch holds a block of it for each chunk.
	from         *e2eOutput
	scratch      buffer
	scratchShape tensor.Shape
}

// e2nForward computes the row term into t (O, B, p), then
// N[n,o,i] = R[o,n,i] + b[o].
func e2nForward[T float](op *e2nOp, x, w, b, t, out []T) error {
	ts, d := &op.ts, op.dims
	if op.from != nil {
		if err := regenRowTerm(ts, d, op.from, &op.scratch, op.scratchShape, w, t); err != nil {
			return err
		}
	} else {
		rowTerm(ts, d, fillRows(ts, d, op.rows, x), w, t)
	}
	B, O, P := d.B, d.O, d.P
	for n := 0; n < B; n++ {
		for o, bo := range b[:O] {
			dst := out[(n*O+o)*P:][:P]
			for i, v := range t[(o*B+n)*P:][:P] {
				dst[i] = v + bo
			}
		}
	}
	return nil
}

func (op *e2nOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	t := op.term.get(dt, op.termShape)
	if dt == tensor.Float64 {
		err = e2nForward(op, slice[float64](in[0]), slice[float64](in[1]), slice[float64](in[2]), slice[float64](t), slice[float64](out))
	} else {
		err = e2nForward(op, slice[float32](in[0]), slice[float32](in[1]), slice[float32](in[2]), slice[float32](t), slice[float32](out))
	}
	if err != nil {
		return nil, fmt.Errorf("%v: %w", op, err)
	}
	return out, nil
}

func (op *e2nOp) DiffWRT(int) []bool { return []bool{!op.opts.noInputGrad, true, true} }

// SymDiff: with G = dN as (O, B, p), dW = G·Xrow, db[o] = Σ G[o,·] and
// dX = unpermute(Gᵀ·W).
func (op *e2nOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	d := op.dims
	x, w := inputs[0], inputs[1]
	tg := &transposeOp{base: op.derive("E2NGradTerm", []tensor.Shape{op.out}, op.termShape), a: d.B, b: d.O, c: d.P}
	g, err := gorgonia.ApplyOp(tg, grad)
	if err != nil {
		return nil, err
	}
	grads := make(gorgonia.Nodes, 3)
	if !op.opts.noInputGrad {
		gtShape := tensor.Shape{d.B, d.P, d.O}
		gt, err := gorgonia.ApplyOp(&swapOp{base: op.derive("E2NGradTermT", []tensor.Shape{op.out}, gtShape)}, grad)
		if err != nil {
			return nil, err
		}
		gx := newGradXOp(&op.base, e2nGradXName, d, []tensor.Shape{gtShape, op.in[1]}, op.in[0], 0)
		if grads[0], err = gorgonia.ApplyOp(gx, gt, w); err != nil {
			return nil, err
		}
	}
	gw := &gradWOp{base: op.derive("E2NGradW", []tensor.Shape{op.termShape, op.in[0]}, op.in[1]), dims: d, rows: op.rows}
	if op.from != nil {
		// x is the output of a node-major E2E: its values are made
		// again from the E2E's terms, a block at a time, rather than
		// read back from the batch-sized tensor (see regenGradW).
		_, tn := tileSizes(d.O, d.C*d.P)
		gw.from, gw.scratchShape = op.from, tensor.Shape{ceilDiv(d.C*d.P, tn), regenBlock, tn}
	}
	if grads[1], err = gorgonia.ApplyOp(gw, g, x); err != nil {
		return nil, err
	}
	gb := &biasGradOp{base: op.derive("E2NGradB", []tensor.Shape{op.termShape}, op.in[2]), dims: d}
	if grads[2], err = gorgonia.ApplyOp(gb, g); err != nil {
		return nil, err
	}
	return grads, nil
}

// fusedSums returns the edge sums of grad computed from the inputs of the
// op that makes grad, when grad is the input gradient of a node-major E2N
// that reads this E2E's output and nothing else does (gorgonia would
// otherwise sum the gradients of the readers first). It returns nil
// otherwise. The E2N's own input-gradient node is then read by nobody,
// and an executor that runs only what its outputs need skips it.
func (op *e2eOp) fusedSums(grad *gorgonia.Node, sumsShape tensor.Shape) (*gorgonia.Node, error) {
	gx, ok := grad.Op().(*gradXOp)
	d := op.dims
	if !ok || gx.name != e2nGradXName || !gx.dims.inNodeMajor || !d.outNodeMajor || gx.dims.C != d.O || gx.dims.P != d.P || gx.dims.B != d.B {
		return nil, nil
	}
	var in gorgonia.Nodes // gt (B, p, O2), w (O2, C, p)
	for it := grad.Graph().From(grad.ID()); it.Next(); {
		in = append(in, it.Node().(*gorgonia.Node))
	}
	if len(in) != 2 {
		return nil, nil
	}
	shapes := []tensor.Shape{gx.in[0], gx.in[1]}
	name := "E2ESumsOfE2NGrad"
	if op.opts.leaky {
		name += fmt.Sprintf("(LeakyReLU %g)", op.opts.slope)
	}
	es := &e2nSumsOp{
		base:         op.derive(name, shapes, sumsShape),
		dims:         d,
		inner:        gx.dims.O,
		slope:        op.opts.slope,
		pre:          op.preTerms(),
		scratchShape: tensor.Shape{d.B, d.P, sumsChannelBlock(d.O, d.P) * d.P},
	}
	return gorgonia.ApplyOp(es, in...)
}

// sumsTileValues bounds the values of the tile of dH' that an e2nSumsOp
// makes at a time for one sample: all p rows of the sample by the columns
// of as many channels as fit. Every product packs anew the columns of W it
// reads (O2 × columns), so a tile of all p rows costs a p-th of a packed
// value per multiply-add; tiles of 16 rows made the products that build
// dH' take twice as long as the E2N's other two products of the same size
// (OpenBLAS, p = 116). The tile stays in a core's cache while its sums
// read it.
const sumsTileValues = 1 << 16

// sumsChannelBlock returns the number of channels of one tile of dH': at
// most sumsTileValues/(p·p) and at least one, spread evenly over the O
// channels.
func sumsChannelBlock(O, P int) int {
	most := max(1, sumsTileValues/(P*P))
	return ceilDiv(O, ceilDiv(O, most))
}

// e2nSumsOp is edgeSumsOp of dH' = Gt·W, the input gradient of a
// node-major E2N (Gt (B, p, O2) its output gradient as gradXOp reads it,
// W (O2, C·p) its weights): each sample's dH'_n is made a few channels at
// a time (sumsChannelBlock) into a scratch tile and summed at once, so
// that the batch-sized dH' is never stored. Inputs gt and w (after a
// fused leaky rectifier, the rectifier's inputs come from the forward
// op's terms); result (3, O, B, p) as edgeSums.
type e2nSumsOp struct {
	base
	dims         filterDims // of the E2E
	inner        int        // O2, the E2N's output channels
	slope        float64
	pre          *buffer // the forward op's terms, with a fused rectifier (see preActivations); nil without
	scratch      buffer
	scratchShape tensor.Shape
}

func e2nSums[T float](op *e2nSumsOp, in []*tensor.Dense, out *tensor.Dense) error {
	pre, err := preActivations[T](op.pre, op.dims)
	if err != nil {
		return err
	}
	scratch := slice[T](op.scratch.get(dtypeOf[T](), op.scratchShape))
	l := forEachSetup(&op.ts, op.dims, leakyFactors[T](op.slope), kE2NSums, slice[T](in[0]), slice[T](in[1]), slice[T](out), scratch, pre)
	l.inner = op.inner
	op.ts.pool.Run(l, op.dims.B)
	l.clear()
	return nil
}

func (op *e2nSumsOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	return runKernel(op, &op.base, vals, e2nSums[float64], e2nSums[float32])
}

// e2nSumsOf does sample n of e2nSumsOp: s = gt, w, sums, scratch, pre
// (nil without a fused rectifier). Each column sum adds the rows in
// order, as edgeSumsOf does.
func e2nSumsOf[T float](l *loop[T], n int) {
	gt, w, s, scratch, pre := l.s[0], l.s[1], l.s[2], l.s[3], l.s[4]
	d := l.d
	O, P, O2 := d.O, d.P, l.inner
	block := sumsChannelBlock(O, P)
	tile := scratch[n*P*block*P:][:P*block*P]
	for o0 := 0; o0 < O; o0 += block {
		cols := min(block, O-o0) * P
		serialGemm(false, false, P, cols, O2, 1, gt[n*P*O2:], O2, w[o0*P:], O*P, 0, tile, cols)
		for o := o0; o < o0+cols/P; o++ {
			channelSums(d, n, o, tile[(o-o0)*P:], cols, s, pre, l.f)
		}
	}
	transposeRowSums(d, s, n)
}

// edgeSumsOp: input dH (B, O, p, p) (after a fused leaky rectifier, the
// rectifier's inputs come from the forward op's terms); result
// (3, O, B, p), see edgeSums.
type edgeSumsOp struct {
	base
	dims  filterDims
	slope float64
	pre   *buffer // the forward op's terms, with a fused rectifier (see preActivations); nil without
}

func sums[T float](op *edgeSumsOp, in []*tensor.Dense, out *tensor.Dense) error {
	pre, err := preActivations[T](op.pre, op.dims)
	if err != nil {
		return err
	}
	edgeSums(&op.ts, op.dims, slice[T](in[0]), pre, op.slope, slice[T](out))
	return nil
}

func (op *edgeSumsOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	return runKernel(op, &op.base, vals, sums[float64], sums[float32])
}

// transposeOp: (a, b, c) -> (b, a, c).
type transposeOp struct {
	base
	a, b, c int
}

func transpose[T float](op *transposeOp, src, dst []T) {
	for i := 0; i < op.a; i++ {
		for j := 0; j < op.b; j++ {
			copy(dst[(j*op.a+i)*op.c:][:op.c], src[(i*op.b+j)*op.c:][:op.c])
		}
	}
}

func (op *transposeOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		transpose(op, slice[float64](in[0]), slice[float64](out))
	} else {
		transpose(op, slice[float32](in[0]), slice[float32](out))
	}
	return out, nil
}

// gradXOp: the gradient with respect to x of a row term (inputs g, w;
// E2N) or of a row plus a column term (inputs g, wr, wc; E2E). g holds the
// row term's gradient transposed, as (B, p, O), at g[rowsT:], and for E2E
// the column term's gradient as (O, B, p) at g[O·B·p:] (see edgeSums).
type gradXOp struct {
	base
	dims     filterDims
	rowsT    int
	dxr      buffer // dXrow, (B, p, C, p), when C > 1
	dxrShape tensor.Shape
	wt       buffer // Wcᵀ, (C·p, O), for E2E
	wtShape  tensor.Shape
}

func newGradXOp(parent *base, name string, d filterDims, in []tensor.Shape, out tensor.Shape, rowsT int) *gradXOp {
	return &gradXOp{
		base:     parent.derive(name, in, out),
		dims:     d,
		rowsT:    rowsT,
		dxrShape: tensor.Shape{d.B, d.P, d.C, d.P},
		wtShape:  tensor.Shape{d.C * d.P, d.O},
	}
}

func gradX[T float](op *gradXOp, in []*tensor.Dense, out *tensor.Dense) error {
	d := op.dims
	g, dx := slice[T](in[0]), slice[T](out)
	gt := g[op.rowsT:]
	withCols := len(in) == 3
	if withCols {
		wt := slice[T](op.wt.get(dtypeOf[T](), op.wtShape))
		transposeInto(slice[T](in[2]), d.O, d.C*d.P, wt)
		colGradX(&op.ts, d, g[d.termSize():], wt, dx)
	}
	if d.rowsAreInput() {
		rowGradX(&op.ts, d, gt, slice[T](in[1]), dx, withCols)
		return nil
	}
	dxr := slice[T](op.dxr.get(dtypeOf[T](), op.dxrShape))
	rowGradX(&op.ts, d, gt, slice[T](in[1]), dxr, false)
	unpermute(&op.ts, d, dxr, dx, withCols)
	return nil
}

func (op *gradXOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	return runKernel(op, &op.base, vals, gradX[float64], gradX[float32])
}

// gradWOp: the gradient with respect to the weights of a row term (reading
// Xrow from the forward pass through rows) or of a column term (col); inputs
// g, x, with the term's gradient at g[off:] as an (O, B, p) matrix.
type gradWOp struct {
	base
	dims filterDims
	off  int
	col  bool
	rows *rowCache
	// from makes x again (regenGradW), when x is a node-major E2E's
	// output; scratch holds a block of it for each chunk.
	from         *e2eOutput
	scratch      buffer
	scratchShape tensor.Shape
}

// e2eOutput is what an E2E's output is made from: the terms its forward
// pass kept, (2, O, B, p), and the factors of its rectifier ({1, 1}
// without one, which leaves every value as it is).
type e2eOutput struct {
	terms *buffer
	f     [2]float64
}

// check returns the terms, or an error when the E2E has not run.
func (e *e2eOutput) check(dt tensor.Dtype, d filterDims) (*tensor.Dense, error) {
	if e.terms.t == nil || e.terms.t.Dtype() != dt || e.terms.t.Shape().TotalSize() != 2*d.C*d.B*d.P {
		return nil, fmt.Errorf("ops: an E2N run before the E2E whose output it reads")
	}
	return e.terms.t, nil
}

func gradW[T float](op *gradWOp, in []*tensor.Dense, out *tensor.Dense) error {
	g, x, dw := slice[T](in[0])[op.off:], slice[T](in[1]), slice[T](out)
	if op.col {
		colGradW(&op.ts, op.dims, g, x, dw)
		return nil
	}
	if op.from != nil {
		return regenGradW(&op.ts, op.dims, op.from, &op.scratch, op.scratchShape, g, dw)
	}
	xr, err := rows(op.dims, op.rows, x)
	if err != nil {
		return err
	}
	rowGradW(&op.ts, op.dims, g, xr, dw)
	return nil
}

func (op *gradWOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	return runKernel(op, &op.base, vals, gradW[float64], gradW[float32])
}

// biasGradOp: the gradient with respect to a per-channel bias; input g,
// whose first O·B·p values are a term's gradient as an (O, B, p) matrix.
type biasGradOp struct {
	base
	dims filterDims
}

func (op *biasGradOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		biasGrad(op.dims, slice[float64](in[0]), slice[float64](out))
	} else {
		biasGrad(op.dims, slice[float32](in[0]), slice[float32](out))
	}
	return out, nil
}

// regenBlock is the number of rows of Xrow (steps of the sum over samples
// and nodes) that regenGradW makes at a time: the blocking along k of
// internal/gemm's kernels, so that the blocks' products add up to the
// bits of one product over all the rows.
const regenBlock = 256

// regenGradW sets dW = G·Xrow (G the (O, B·p) gradient of the E2N's row
// term, Xrow = H' (B·p, C·p) the node-major output of the E2E before it)
// without reading H': one chunk per tile of columns of dW, each making
// the values of H' it needs, regenBlock rows at a time, from the E2E's
// terms (H'[n,i,c,k] = f[s]·(R'[c,n,i] + Cc[c,n,k]), s the sign bit, as
// the E2E's forward pass made them, so the same bits) into a block of
// scratch space that stays in the core's cache while internal/gemm packs
// it. The batch-sized H' would otherwise be read back from memory.
func regenGradW[T float](ts *tasks, d filterDims, from *e2eOutput, buf *buffer, shape tensor.Shape, g, dw []T) error {
	return regen(ts, d, from, buf, shape, kRegenGradW, g, dw)
}

// regen runs kernel k (kRegenGradW or kRegenRowTerm) over shape[0] tiles
// of shape[2] columns, with the E2E's terms of from and a scratch block
// of shape per tile: s = the kernel's operand and result, terms, scratch.
func regen[T float](ts *tasks, d filterDims, from *e2eOutput, buf *buffer, shape tensor.Shape, k kernel, operand, result []T) error {
	terms, err := from.check(dtypeOf[T](), d)
	if err != nil {
		return err
	}
	chunks, tn := shape[0], shape[2]
	scratch := slice[T](buf.get(dtypeOf[T](), shape))
	f := [2]T{T(from.f[0]), T(from.f[1])}
	l := forEachSetup(ts, d, f, k, operand, result, slice[T](terms), scratch)
	l.inner = tn
	ts.pool.Run(l, chunks)
	l.clear()
	return nil
}

// regenGradWOf does the columns tn·t… of dW (tn = l.inner): s = g, dw,
// terms, scratch.
func regenGradWOf[T float](l *loop[T], t int) {
	g, dw, terms, scratch := l.s[0], l.s[1], l.s[2], l.s[3]
	d, tn := l.d, l.inner
	B, C, O, P := d.B, d.C, d.O, d.P
	BP, CP := B*P, C*P
	j0 := t * tn
	w := min(tn, CP-j0)
	block := scratch[t*regenBlock*tn:][:regenBlock*tn]
	cols := terms[C*BP:] // Cc, (C, B, p)
	for k0 := 0; k0 < BP; k0 += regenBlock {
		kb := min(regenBlock, BP-k0)
		for s := range kb {
			n, i := (k0+s)/P, (k0+s)%P
			row := block[s*w:][:w]
			for j := j0; j < j0+w; {
				c, k := j/P, j%P
				seg := min(P-k, j0+w-j)
				at := (c*B + n) * P
				vec.LeakyRow(row[j-j0:][:seg], cols[at+k:][:seg], terms[at+i], l.f)
				j += seg
			}
		}
		serialGemm(false, false, O, w, kb, 1, g[k0:], BP, block, w, betaFor[T](k0 == 0), dw[j0:], CP)
	}
}

// regenRowTerm sets the (O, B, p) row term R = W·Xrowᵀ of a node-major E2N
// (W (O, C·p), Xrow = H' (B·p, C·p) the output of the E2E before it)
// without reading H': one chunk per tile of columns of R (rows (n, i) of
// H'), each making Xrowᵀ regenBlock rows (values (c, k)) at a time from the
// E2E's terms, H'[n,i,c,k] = f[s]·(Cc[c,n,k] + R'[c,n,i]) (the sum the
// E2E's forward pass made, its terms swapped: the same bits), into
// scratch space that stays in the core's cache, and multiplying. The
// blocks follow internal/gemm's blocking along k, so R has the bits of
// W·Xrowᵀ in one product.
func regenRowTerm[T float](ts *tasks, d filterDims, from *e2eOutput, buf *buffer, shape tensor.Shape, w, r []T) error {
	return regen(ts, d, from, buf, shape, kRegenRowTerm, w, r)
}

// regenRowTermOf does the columns tn·t… of R (tn = l.inner): s = w, r,
// terms, scratch.
func regenRowTermOf[T float](l *loop[T], t int) {
	w, r, terms, scratch := l.s[0], l.s[1], l.s[2], l.s[3]
	d, tn := l.d, l.inner
	B, C, O, P := d.B, d.C, d.O, d.P
	BP, CP := B*P, C*P
	q0 := t * tn
	wd := min(tn, BP-q0)
	block := scratch[t*regenBlock*tn:][:regenBlock*tn]
	cols := terms[C*BP:] // Cc, (C, B, p)
	for k0 := 0; k0 < CP; k0 += regenBlock {
		kb := min(regenBlock, CP-k0)
		for s := range kb {
			c, k := (k0+s)/P, (k0+s)%P
			row := block[s*wd:][:wd]
			for q := q0; q < q0+wd; {
				n, i := q/P, q%P
				seg := min(P-i, q0+wd-q)
				at := (c*B + n) * P
				vec.LeakyRow(row[q-q0:][:seg], terms[at+i:][:seg], cols[at+k], l.f)
				q += seg
			}
		}
		serialGemm(false, false, O, wd, kb, 1, w[k0:], CP, block, wd, betaFor[T](k0 == 0), r[q0:], BP)
	}
}
