// Package ops holds the fused gorgonia operations of the graph-filter
// networks: edge-to-edge and edge-to-node filters (E2E, optionally with its
// leaky rectifier fused in, and E2N), a dense layer applied to every edge
// (EdgeDense, a 1 × 1 convolution), graph convolution (GraphConv), a
// dense layer with its bias (Dense), leaky ReLU, inverted dropout, a
// batched transpose (SwapLastAxes), and the ops that reshape and merge
// branch outputs: a zero-copy Reshape, Concat and the element-wise Product.
//
// Each function returns a node of the caller's expression graph; each op
// is differentiable by gorgonia's symbolic differentiation (gorgonia.Grad),
// and its backward pass is built from ops of this package too. Forward and
// backward passes are a few matrix products (package internal/gemm's, in
// every build: on these shapes it is as fast as OpenBLAS and needs no cgo
// call) and branch-free element loops. All ops accept float32 and float64 tensors.
//
// Parallelism: with WithPool, an op runs its matrix products tile by tile
// and its element loops sample by sample (or in fixed ranges) as the
// chunks of a task on an internal/parallel.Pool. Tiles and chunks are
// fixed by the shapes, never by the number of goroutines, so results are
// the same whatever the pool. Tiles are few and large; each is computed
// by internal/gemm's Serial on the calling goroutine (a larger product
// through blas32 or blas64 would start goroutines of its own, which
// allocate).
//
// Buffers: every op allocates its output (and its scratch space) at its
// first run and writes into the same buffers at every later run, so that
// the ops allocate nothing in steady state. (gorgonia's tape machine
// allocates a few small values per instruction; package graphnet runs its
// graphs with an executor of its own that does not.) Consequences:
//   - the value of a node after a run is only valid until the next run;
//     copy it (or read it with gorgonia.Read) to keep it;
//   - one graph must not be run by two machines at the same time;
//   - the shapes of a node are fixed when it is built: a run whose inputs
//     have other shapes (another batch size) fails with an error naming the
//     op; build one graph per batch size;
//   - the backward op of the weights of E2E and E2N reads the permuted copy
//     of x made by its forward op, and the backward sums of an E2E with a
//     fused rectifier read the row and column terms its forward op kept
//     (to recompute the signs of the rectifier's input), so they must run
//     after that forward op in the same step (any topological order does:
//     they read its output's gradient).
//
// Options: an op whose data input is participant data rather than the
// output of another op does not need the gradient with respect to that
// input; pass NoInputGrad() to skip building it (about half of the backward
// cost of a first edge-to-edge layer). NodeMajor lays the tensor between
// an E2E and the E2N that reads it out by node, so that neither pass
// copies it into the order the E2N's product needs; when that E2N is the
// E2E output's only reader, the E2E's backward pass sums the E2N's input
// gradient block by block as it makes it, and the batch-sized gradient is
// never stored (the E2N's own input-gradient node is then read by nobody:
// run only what the outputs need).
package ops
