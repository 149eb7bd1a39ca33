package ops

import (
	"fmt"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// E2E is the edge-to-edge cross-shaped filter of Kawahara et al. (2017,
// BrainNetCNN):
//
//	H[n,o,i,j] = Σ_c Σ_k (Wr[o,c,k]·X[n,c,i,k] + Wc[o,c,k]·X[n,c,k,j]) + b[o]
//
// x is (B, C, p, p) (B samples, C input channels of p×p edge values), wr
// and wc are (O, C, p), b is (O); the result is (B, O, p, p). Each output
// edge (i, j) sees row i and column j of every input channel. The inputs
// need not be symmetric. It is differentiable with respect to all four
// inputs (x only without NoInputGrad).
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
	for i, name := range []string{"wr", "wc"} {
		if s := shapes[1+i]; s[0] != O || s[1] != C || s[2] != P {
			return nil, fmt.Errorf("ops: E2E: %s has shape %v, want (%d, %d, %d) (O, C, p) to match x %v and wr %v", name, s, O, C, P, xs, shapes[1])
		}
	}
	if shapes[3][0] != O {
		return nil, fmt.Errorf("ops: E2E: b has shape %v, want (%d)", shapes[3], O)
	}
	op := &e2eOp{
		base: newBase(fmt.Sprintf("E2E(%v→%d)", xs, O), shapes, tensor.Shape{B, O, P, P}),
		dims: filterDims{B: B, C: C, O: O, P: P},
		opts: collect(opts),
	}
	return gorgonia.ApplyOp(op, x, wr, wc, b)
}

// E2N is the edge-to-node filter of Kawahara et al. (2017, BrainNetCNN):
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
	xs := shapes[0]
	B, C, P, O := xs[0], xs[1], xs[2], shapes[1][0]
	if xs[3] != P {
		return nil, fmt.Errorf("ops: E2N: x has shape %v, want (B, C, p, p)", xs)
	}
	if s := shapes[1]; s[1] != C || s[2] != P {
		return nil, fmt.Errorf("ops: E2N: w has shape %v, want (O, %d, %d) (O, C, p) to match x %v", s, C, P, xs)
	}
	if shapes[2][0] != O {
		return nil, fmt.Errorf("ops: E2N: b has shape %v, want (%d)", shapes[2], O)
	}
	op := &e2nOp{
		base: newBase(fmt.Sprintf("E2N(%v→%d)", xs, O), shapes, tensor.Shape{B, O, P}),
		dims: filterDims{B: B, C: C, O: O, P: P},
		opts: collect(opts),
	}
	return gorgonia.ApplyOp(op, x, w, b)
}

// filterDims are the sizes of a filter: B samples, C input channels,
// O output channels, p nodes.
type filterDims struct{ B, C, O, P int }

// layout places the O×p matrix of sample n of a row or column term at
// off + n·step in its slice, with rows ld apart.
type layout struct{ off, step, ld int }

// sumsLayouts are where edgeSums puts the row sums (dR) and the column
// sums (dC) in its (2, O, B, p) output: dR[o,n,i] then dC[o,n,j], so that
// all samples of one channel o are contiguous.
func (d filterDims) sumsLayouts() (rows, cols layout) {
	return layout{0, d.P, d.B * d.P}, layout{d.O * d.B * d.P, d.P, d.B * d.P}
}

// e2nLayout is the layout of a (B, O, p) tensor.
func (d filterDims) e2nLayout() layout { return layout{0, d.O * d.P, d.P} }

func (d filterDims) stacked(l layout) bool { return d.C == 1 && l.step == d.P && l.ld == d.B*d.P }

func betaFor[T float](first bool) T {
	if first {
		return 0
	}
	return 1
}

// rowTerm sets out_n = Σ_c W_c·X_ncᵀ, where W_c is the O×p slice c of w
// (O, C, p) and X_nc the p×p channel c of sample n of x (B, C, p, p).
func rowTerm[T float](d filterDims, x, w, out []T, l layout) {
	B, C, O, P := d.B, d.C, d.O, d.P
	if d.stacked(l) {
		gemm(false, true, O, B*P, P, 1, w, P, x, P, 0, out[l.off:], l.ld)
		return
	}
	for n := 0; n < B; n++ {
		for c := 0; c < C; c++ {
			gemm(false, true, O, P, P, 1, w[c*P:], C*P, x[(n*C+c)*P*P:], P, betaFor[T](c == 0), out[l.off+n*l.step:], l.ld)
		}
	}
}

// colTerm sets out_n = Σ_c W_c·X_nc.
func colTerm[T float](d filterDims, x, w, out []T, l layout) {
	B, C, O, P := d.B, d.C, d.O, d.P
	for n := 0; n < B; n++ {
		for c := 0; c < C; c++ {
			gemm(false, false, O, P, P, 1, w[c*P:], C*P, x[(n*C+c)*P*P:], P, betaFor[T](c == 0), out[l.off+n*l.step:], l.ld)
		}
	}
}

// rowGradW sets dW_c = Σ_n G_n·X_nc, the gradient of a row term with
// respect to its weights given the gradient G of the term.
func rowGradW[T float](d filterDims, g, x, dw []T, l layout) {
	B, C, O, P := d.B, d.C, d.O, d.P
	if d.stacked(l) {
		gemm(false, false, O, P, B*P, 1, g[l.off:], l.ld, x, P, 0, dw, P)
		return
	}
	for n := 0; n < B; n++ {
		for c := 0; c < C; c++ {
			gemm(false, false, O, P, P, 1, g[l.off+n*l.step:], l.ld, x[(n*C+c)*P*P:], P, betaFor[T](n == 0), dw[c*P:], C*P)
		}
	}
}

// colGradW sets dW_c = Σ_n G_n·X_ncᵀ.
func colGradW[T float](d filterDims, g, x, dw []T, l layout) {
	B, C, O, P := d.B, d.C, d.O, d.P
	for n := 0; n < B; n++ {
		for c := 0; c < C; c++ {
			gemm(false, true, O, P, P, 1, g[l.off+n*l.step:], l.ld, x[(n*C+c)*P*P:], P, betaFor[T](n == 0), dw[c*P:], C*P)
		}
	}
}

// rowGradX sets dX_nc = G_nᵀ·W_c (or adds it, if accumulate).
func rowGradX[T float](d filterDims, g, w, dx []T, l layout, accumulate bool) {
	B, C, O, P := d.B, d.C, d.O, d.P
	if d.stacked(l) {
		gemm(true, false, B*P, P, O, 1, g[l.off:], l.ld, w, P, betaFor[T](!accumulate), dx, P)
		return
	}
	for n := 0; n < B; n++ {
		for c := 0; c < C; c++ {
			gemm(true, false, P, P, O, 1, g[l.off+n*l.step:], l.ld, w[c*P:], C*P, betaFor[T](!accumulate), dx[(n*C+c)*P*P:], P)
		}
	}
}

// colGradX sets dX_nc = W_cᵀ·G_n (or adds it, if accumulate).
func colGradX[T float](d filterDims, g, w, dx []T, l layout, accumulate bool) {
	B, C, O, P := d.B, d.C, d.O, d.P
	for n := 0; n < B; n++ {
		for c := 0; c < C; c++ {
			gemm(true, false, P, P, O, 1, w[c*P:], C*P, g[l.off+n*l.step:], l.ld, betaFor[T](!accumulate), dx[(n*C+c)*P*P:], P)
		}
	}
}

// biasGrad sets db[o] = Σ_n Σ_i G_n[o,i].
func biasGrad[T float](d filterDims, g, db []T, l layout) {
	for o := range db[:d.O] {
		var s T
		for n := 0; n < d.B; n++ {
			for _, v := range g[l.off+n*l.step+o*l.ld:][:d.P] {
				s += v
			}
		}
		db[o] = s
	}
}

// e2eForward computes H from the row and column terms R and Cc, kept in
// rc (2, O, B, p) for the fused broadcast H[n,o,i,j] = R[o,n,i] + Cc[o,n,j] + b[o].
func e2eForward[T float](d filterDims, x, wr, wc, b, rc, h []T) {
	rl, cl := d.sumsLayouts()
	rowTerm(d, x, wr, rc, rl)
	colTerm(d, x, wc, rc, cl)
	B, O, P := d.B, d.O, d.P
	for n := 0; n < B; n++ {
		for o := 0; o < O; o++ {
			r := rc[rl.off+n*rl.step+o*rl.ld:][:P]
			cc := rc[cl.off+n*cl.step+o*cl.ld:][:P]
			blk := h[(n*O+o)*P*P:][:P*P]
			bo := b[o]
			for i, ri := range r {
				ri += bo
				row := blk[i*P:][:P]
				for j, cj := range cc {
					row[j] = ri + cj
				}
			}
		}
	}
}

// edgeSums sets s (2, O, B, p) to the row sums dR[o,n,i] = Σ_j G[n,o,i,j]
// and column sums dC[o,n,j] = Σ_i G[n,o,i,j] of g (B, O, p, p).
func edgeSums[T float](d filterDims, g, s []T) {
	rl, cl := d.sumsLayouts()
	B, O, P := d.B, d.O, d.P
	for n := 0; n < B; n++ {
		for o := 0; o < O; o++ {
			blk := g[(n*O+o)*P*P:][:P*P]
			r := s[rl.off+n*rl.step+o*rl.ld:][:P]
			cc := s[cl.off+n*cl.step+o*cl.ld:][:P]
			clear(cc)
			for i := range r {
				row := blk[i*P:][:P]
				var sum T
				for j, v := range row {
					sum += v
					cc[j] += v
				}
				r[i] = sum
			}
		}
	}
}

type e2eOp struct {
	base
	dims filterDims
	opts options
	rc   buffer // row and column terms, (2, O, B, p)
}

func (op *e2eOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	d := op.dims
	rc := op.rc.get(dt, tensor.Shape{2, d.O, d.B, d.P})
	if dt == tensor.Float64 {
		e2eForward(d, slice[float64](in[0]), slice[float64](in[1]), slice[float64](in[2]), slice[float64](in[3]), slice[float64](rc), slice[float64](out))
	} else {
		e2eForward(d, slice[float32](in[0]), slice[float32](in[1]), slice[float32](in[2]), slice[float32](in[3]), slice[float32](rc), slice[float32](out))
	}
	return out, nil
}

func (op *e2eOp) DiffWRT(int) []bool { return []bool{!op.opts.noInputGrad, true, true, true} }

func (op *e2eOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	d := op.dims
	x, wr, wc := inputs[0], inputs[1], inputs[2]
	sumsShape := tensor.Shape{2, d.O, d.B, d.P}
	sums, err := gorgonia.ApplyOp(&edgeSumsOp{base: newBase("E2ESums", []tensor.Shape{op.out}, sumsShape), dims: d}, grad)
	if err != nil {
		return nil, err
	}
	rl, cl := d.sumsLayouts()
	grads := make(gorgonia.Nodes, 4)
	if !op.opts.noInputGrad {
		gx := &gradXOp{base: newBase("E2EGradX", []tensor.Shape{sumsShape, op.in[1], op.in[2]}, op.in[0]), dims: d, rows: rl, cols: cl}
		if grads[0], err = gorgonia.ApplyOp(gx, sums, wr, wc); err != nil {
			return nil, err
		}
	}
	gwr := &gradWOp{base: newBase("E2EGradWr", []tensor.Shape{sumsShape, op.in[0]}, op.in[1]), dims: d, l: rl}
	if grads[1], err = gorgonia.ApplyOp(gwr, sums, x); err != nil {
		return nil, err
	}
	gwc := &gradWOp{base: newBase("E2EGradWc", []tensor.Shape{sumsShape, op.in[0]}, op.in[2]), dims: d, l: cl, col: true}
	if grads[2], err = gorgonia.ApplyOp(gwc, sums, x); err != nil {
		return nil, err
	}
	gb := &biasGradOp{base: newBase("E2EGradB", []tensor.Shape{sumsShape}, op.in[3]), dims: d, l: rl}
	if grads[3], err = gorgonia.ApplyOp(gb, sums); err != nil {
		return nil, err
	}
	return grads, nil
}

type e2nOp struct {
	base
	dims filterDims
	opts options
}

func e2nForward[T float](d filterDims, x, w, b, out []T) {
	l := d.e2nLayout()
	rowTerm(d, x, w, out, l)
	for n := 0; n < d.B; n++ {
		for o, bo := range b[:d.O] {
			for i := range out[l.off+n*l.step+o*l.ld:][:d.P] {
				out[l.off+n*l.step+o*l.ld+i] += bo
			}
		}
	}
}

func (op *e2nOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		e2nForward(op.dims, slice[float64](in[0]), slice[float64](in[1]), slice[float64](in[2]), slice[float64](out))
	} else {
		e2nForward(op.dims, slice[float32](in[0]), slice[float32](in[1]), slice[float32](in[2]), slice[float32](out))
	}
	return out, nil
}

func (op *e2nOp) DiffWRT(int) []bool { return []bool{!op.opts.noInputGrad, true, true} }

func (op *e2nOp) SymDiff(inputs gorgonia.Nodes, output, grad *gorgonia.Node) (gorgonia.Nodes, error) {
	d := op.dims
	x, w := inputs[0], inputs[1]
	l := d.e2nLayout()
	grads := make(gorgonia.Nodes, 3)
	var err error
	if !op.opts.noInputGrad {
		gx := &gradXOp{base: newBase("E2NGradX", []tensor.Shape{op.out, op.in[1]}, op.in[0]), dims: d, rows: l}
		if grads[0], err = gorgonia.ApplyOp(gx, grad, w); err != nil {
			return nil, err
		}
	}
	gw := &gradWOp{base: newBase("E2NGradW", []tensor.Shape{op.out, op.in[0]}, op.in[1]), dims: d, l: l}
	if grads[1], err = gorgonia.ApplyOp(gw, grad, x); err != nil {
		return nil, err
	}
	gb := &biasGradOp{base: newBase("E2NGradB", []tensor.Shape{op.out}, op.in[2]), dims: d, l: l}
	if grads[2], err = gorgonia.ApplyOp(gb, grad); err != nil {
		return nil, err
	}
	return grads, nil
}

// edgeSumsOp: (B, O, p, p) -> (2, O, B, p), see edgeSums.
type edgeSumsOp struct {
	base
	dims filterDims
}

func (op *edgeSumsOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		edgeSums(op.dims, slice[float64](in[0]), slice[float64](out))
	} else {
		edgeSums(op.dims, slice[float32](in[0]), slice[float32](out))
	}
	return out, nil
}

// gradXOp: the gradient with respect to x of a row term (g laid out as
// rows) plus, for E2E, a column term (inputs g, wr, wc; g laid out as cols
// too). For E2N the inputs are g, w.
type gradXOp struct {
	base
	dims       filterDims
	rows, cols layout
}

func gradX[T float](op *gradXOp, in []*tensor.Dense, out *tensor.Dense) {
	g, dx := slice[T](in[0]), slice[T](out)
	rowGradX(op.dims, g, slice[T](in[1]), dx, op.rows, false)
	if len(in) == 3 {
		colGradX(op.dims, g, slice[T](in[2]), dx, op.cols, true)
	}
}

func (op *gradXOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		gradX[float64](op, in, out)
	} else {
		gradX[float32](op, in, out)
	}
	return out, nil
}

// gradWOp: the gradient with respect to the weights of a row (or column)
// term; inputs g, x.
type gradWOp struct {
	base
	dims filterDims
	l    layout
	col  bool
}

func gradW[T float](op *gradWOp, in []*tensor.Dense, out *tensor.Dense) {
	if op.col {
		colGradW(op.dims, slice[T](in[0]), slice[T](in[1]), slice[T](out), op.l)
		return
	}
	rowGradW(op.dims, slice[T](in[0]), slice[T](in[1]), slice[T](out), op.l)
}

func (op *gradWOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		gradW[float64](op, in, out)
	} else {
		gradW[float32](op, in, out)
	}
	return out, nil
}

// biasGradOp: the gradient with respect to a per-channel bias; input g.
type biasGradOp struct {
	base
	dims filterDims
	l    layout
}

func (op *biasGradOp) Do(vals ...gorgonia.Value) (gorgonia.Value, error) {
	in, out, dt, err := op.inputs(vals)
	if err != nil {
		return nil, err
	}
	if dt == tensor.Float64 {
		biasGrad(op.dims, slice[float64](in[0]), slice[float64](out), op.l)
	} else {
		biasGrad(op.dims, slice[float32](in[0]), slice[float32](out), op.l)
	}
	return out, nil
}
